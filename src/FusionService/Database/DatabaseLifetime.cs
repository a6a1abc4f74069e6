// Starts the store before the rest of the host and stops it after.
namespace FusionService.Database;

/// <summary>
/// Hosted service registered before the Orleans silo and the writers: hosted services start in registration order
/// and stop in reverse, so the store is up before any grain activates and stops after the grains have persisted
/// their checkpoints and the writers have drained. A history-read process only attaches to a running embedded cluster
/// (<paramref name="attachOnly"/>).
/// </summary>
internal sealed class DatabaseLifetime(FusionDatabase database, bool attachOnly) : IHostedService
{
    public Task StartAsync(CancellationToken cancellationToken) => attachOnly
        ? database.AttachAsync(cancellationToken)
        : database.StartAsync(cancellationToken);

    public Task StopAsync(CancellationToken cancellationToken) => database.StopAsync(cancellationToken);
}
