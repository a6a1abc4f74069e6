// Admission of history reads: a global and a per-fleet limit on how many run at once.
using Microsoft.Extensions.Options;

namespace FusionService.History;

/// <summary>
/// Counts the history reads in flight: at most <see cref="HeavyReadOptions.MaxConcurrentPerFleet"/> per fleet and
/// <see cref="HeavyReadOptions.MaxConcurrent"/> in all. A request waits up to <see cref="HeavyReadOptions.QueueTimeoutMs"/>
/// in all for its slots (the dashboard's vehicle view asks for five history reads at once, which then run a few at a
/// time); a fleet whose reads stay over its share is refused (429), and so is a request that found its fleet's share
/// free but every slot of the process taken (503). A slot is held until its response has been written.
/// </summary>
public sealed class HeavyReadGate : IDisposable
{
    private readonly HeavyReadOptions _options;
    private readonly SemaphoreSlim _global;
    private readonly System.Collections.Concurrent.ConcurrentDictionary<Guid, SemaphoreSlim> _perFleet = new();
    private long _refusedFleet;
    private long _refusedBusy;

    /// <summary>Creates the gate and shows its counts in <paramref name="metrics"/>.</summary>
    public HeavyReadGate(IOptions<HeavyReadOptions> options, Operations.ServiceMetrics metrics)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(metrics);
        _options = options.Value;
        _global = new SemaphoreSlim(options.Value.MaxConcurrent, options.Value.MaxConcurrent);
        metrics.HeavyReadsInFlight = () => InFlight;
        metrics.HeavyReadsRefused = () => (RefusedFleet, RefusedBusy);
    }

    /// <summary>History reads running now.</summary>
    public int InFlight => _options.MaxConcurrent - _global.CurrentCount;

    /// <summary>Reads refused because their fleet had its maximum running (429).</summary>
    public long RefusedFleet => Interlocked.Read(ref _refusedFleet);

    /// <summary>Reads refused because every slot stayed taken (503).</summary>
    public long RefusedBusy => Interlocked.Read(ref _refusedBusy);

    /// <summary>A slot for one read of <paramref name="fleetId"/>, or the reason there is none.</summary>
    public async Task<(IDisposable? Slot, HeavyReadRefusal Refusal)> TryEnterAsync(Guid fleetId, CancellationToken cancellationToken)
    {
        var fleet = _perFleet.GetOrAdd(fleetId, _ => new SemaphoreSlim(_options.MaxConcurrentPerFleet, _options.MaxConcurrentPerFleet));
        var waited = System.Diagnostics.Stopwatch.StartNew();
        if (!await fleet.WaitAsync(_options.QueueTimeoutMs, cancellationToken).ConfigureAwait(false))
        {
            Interlocked.Increment(ref _refusedFleet);
            return (null, HeavyReadRefusal.FleetBusy);
        }

        bool entered = false;
        try
        {
            int left = (int)Math.Max(0, _options.QueueTimeoutMs - waited.ElapsedMilliseconds);
            entered = await _global.WaitAsync(left, cancellationToken).ConfigureAwait(false);
        }
        finally
        {
            if (!entered)
            {
                fleet.Release();
            }
        }

        if (!entered)
        {
            Interlocked.Increment(ref _refusedBusy);
            return (null, HeavyReadRefusal.ServiceBusy);
        }

        return (new Slot(this, fleet), HeavyReadRefusal.None);
    }

    /// <inheritdoc />
    public void Dispose()
    {
        _global.Dispose();
        foreach (var fleet in _perFleet.Values)
        {
            fleet.Dispose();
        }
    }

    private sealed class Slot(HeavyReadGate owner, SemaphoreSlim fleet) : IDisposable
    {
        private int _disposed;

        public void Dispose()
        {
            if (Interlocked.Exchange(ref _disposed, 1) == 0)
            {
                owner._global.Release();
                fleet.Release();
            }
        }
    }
}
