// Admission of history reads: a global and a per-fleet limit on how many run at once.
using Microsoft.Extensions.Options;

namespace FusionService.History;

/// <summary>
/// Counts the history reads in flight: at most <see cref="HeavyReadOptions.MaxConcurrentPerFleet"/> per fleet (a
/// fleet over it is refused at once) and <see cref="HeavyReadOptions.MaxConcurrent"/> in all (a request waits up to
/// <see cref="HeavyReadOptions.QueueTimeoutMs"/> for a slot). A slot is held until its response has been written.
/// </summary>
public sealed class HeavyReadGate : IDisposable
{
    private readonly HeavyReadOptions _options;
    private readonly SemaphoreSlim _global;
    private readonly Dictionary<Guid, int> _perFleet = [];
    private readonly Lock _gate = new();
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
        lock (_gate)
        {
            _perFleet.TryGetValue(fleetId, out int running);
            if (running >= _options.MaxConcurrentPerFleet)
            {
                Interlocked.Increment(ref _refusedFleet);
                return (null, HeavyReadRefusal.FleetBusy);
            }

            _perFleet[fleetId] = running + 1;
        }

        bool entered = false;
        try
        {
            entered = await _global.WaitAsync(_options.QueueTimeoutMs, cancellationToken).ConfigureAwait(false);
        }
        finally
        {
            if (!entered)
            {
                LeaveFleet(fleetId);
            }
        }

        if (!entered)
        {
            Interlocked.Increment(ref _refusedBusy);
            return (null, HeavyReadRefusal.ServiceBusy);
        }

        return (new Slot(this, fleetId), HeavyReadRefusal.None);
    }

    /// <inheritdoc />
    public void Dispose() => _global.Dispose();

    private void LeaveFleet(Guid fleetId)
    {
        lock (_gate)
        {
            if (_perFleet.TryGetValue(fleetId, out int running) && running > 1)
            {
                _perFleet[fleetId] = running - 1;
            }
            else
            {
                _perFleet.Remove(fleetId);
            }
        }
    }

    private sealed class Slot(HeavyReadGate owner, Guid fleetId) : IDisposable
    {
        private int _disposed;

        public void Dispose()
        {
            if (Interlocked.Exchange(ref _disposed, 1) == 0)
            {
                owner._global.Release();
                owner.LeaveFleet(fleetId);
            }
        }
    }
}
