using Microsoft.Extensions.Options;

namespace FusionService.Tracking;

/// <summary>
/// Bounds how many track grains read or write the store at once (restores at activation, checkpoints). A burst of a
/// thousand activations then queues here instead of draining the connection pool that ingest commits need.
/// </summary>
public sealed class TrackStoreGate(IOptions<TrackGrainOptions> options) : IDisposable
{
    private readonly SemaphoreSlim _permits = new(options.Value.MaxConcurrentStoreCalls, options.Value.MaxConcurrentStoreCalls);

    /// <summary>Runs <paramref name="work"/> once a permit is free.</summary>
    public async Task<T> RunAsync<T>(Func<Task<T>> work, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(work);
        await _permits.WaitAsync(cancellationToken).ConfigureAwait(false);
        try
        {
            return await work().ConfigureAwait(false);
        }
        finally
        {
            _permits.Release();
        }
    }

    /// <inheritdoc />
    public void Dispose() => _permits.Dispose();
}
