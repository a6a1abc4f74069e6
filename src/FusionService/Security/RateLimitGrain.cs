// The cluster's one token bucket per rate-limit partition.
using System.Diagnostics;

namespace FusionService.Security;

/// <summary>
/// A token bucket in memory: holds <c>permits</c>, refills <c>permits</c> per window continuously, starts full. Orleans
/// keeps one activation per key in the cluster, so every process leases from the same bucket. Its state is not stored: a
/// bucket reactivated after its silo failed starts full again (docs/limits-and-keys.md, accuracy). An idle bucket stays
/// in memory for longer than the longest window (<c>Security:RateLimitWindowSeconds</c> is at most an hour), so one that is
/// dropped has refilled by then and starting full again changes nothing.
/// </summary>
[CollectionAgeLimit(Minutes = 61)]
internal sealed class RateLimitGrain : Grain, IRateLimitGrain
{
    private double _tokens = double.NaN;
    private long _refilledAt;

    /// <inheritdoc />
    public Task<RateLimitGrant> LeaseAsync(long needed, long wanted, long returned, long permits, int windowS)
    {
        long now = Stopwatch.GetTimestamp();
        double ratePerS = permits / (double)Math.Max(windowS, 1);
        _tokens = double.IsNaN(_tokens)
            ? permits
            : Math.Min(permits, _tokens + (Stopwatch.GetElapsedTime(_refilledAt, now).TotalSeconds * ratePerS));
        _refilledAt = now;
        _tokens = Math.Min(permits, _tokens + Math.Max(returned, 0));
        if (_tokens >= needed)
        {
            long granted = Math.Max(needed, Math.Min(wanted, (long)Math.Floor(_tokens)));
            _tokens -= granted;
            return Task.FromResult(new RateLimitGrant(granted, 0));
        }

        return Task.FromResult(new RateLimitGrant(0, (needed - _tokens) / ratePerS));
    }
}
