// Whether the in-process Orleans silo is active.
namespace FusionService.Operations;

/// <summary>Follows the silo's life cycle: active from <see cref="ServiceLifecycleStage.Active"/> until it stops.</summary>
public sealed class SiloStatus : ILifecycleParticipant<ISiloLifecycle>
{
    private volatile bool _active;

    /// <summary>True while the silo is active.</summary>
    public bool IsActive => _active;

    /// <inheritdoc />
    public void Participate(ISiloLifecycle observer)
    {
        ArgumentNullException.ThrowIfNull(observer);
        observer.Subscribe(
            nameof(SiloStatus),
            ServiceLifecycleStage.Active,
            _ =>
            {
                _active = true;
                return Task.CompletedTask;
            },
            _ =>
            {
                _active = false;
                return Task.CompletedTask;
            });
    }
}
