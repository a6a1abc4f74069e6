// Rate limits per resolved API key and fleet (requests and messages) and per client address (failed authentications).
using System.Collections.Concurrent;
using System.Diagnostics;
using System.Net;
using System.Net.Sockets;
using System.Threading.RateLimiting;
using FusionService.Operations;
using Microsoft.Extensions.Options;

namespace FusionService.Security;

/// <summary>
/// Token buckets partitioned by the resolved key's id and its fleet's id (never by the raw <c>Authorization</c> header,
/// so spellings of one key share one bucket), counting requests and telemetry messages, and by client address for failed
/// authentications. Each bucket holds its permits and refills at that many per <see cref="SecurityOptions.RateLimitWindowSeconds"/>.
/// </summary>
/// <remarks>
/// The key and fleet buckets are the cluster's (<see cref="IRateLimitGrain"/>, one per partition in the cluster): this
/// process leases permits from them, about <see cref="SecurityOptions.RateLimitLeaseSeconds"/> of refill at a time, and
/// spends them locally, so most requests take their permits without a grain call. A lease's unspent permits go back to
/// the bucket with the next lease call, and a lease older than <see cref="SecurityOptions.RateLimitLeaseSeconds"/> is not
/// spent any more, which bounds how far the cluster can go over a limit (docs/limits-and-keys.md). When the bucket
/// cannot be reached within <see cref="SecurityOptions.RateLimitLeaseTimeoutMs"/>, the request is judged by this
/// process's own bucket of the partition instead. Failed authentications are counted per process.
/// </remarks>
public sealed class TenantRateLimiter : IDisposable
{
    private readonly SecurityOptions _options;
    private readonly PartitionedRateLimiter<string> _limiter;
    private readonly ServiceMetrics _metrics;
    private readonly IGrainFactory? _grains;
    private readonly ILogger? _logger;
    private readonly ConcurrentDictionary<string, Lease> _leases = new(StringComparer.Ordinal);
    private readonly long _leaseTicks;
    private long _lastFailureLogged;

    /// <summary>
    /// Creates the limiter from the options in force; refusals are counted in <paramref name="metrics"/>. With
    /// <paramref name="grains"/> the key and fleet limits hold for the whole cluster, without it for this process alone.
    /// </summary>
    public TenantRateLimiter(IOptions<SecurityOptions> options, ServiceMetrics metrics, IGrainFactory? grains = null, ILogger<TenantRateLimiter>? logger = null)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(metrics);
        _metrics = metrics;
        _options = options.Value;
        _grains = grains;
        _logger = logger;
        _leaseTicks = (long)(_options.RateLimitLeaseSeconds * Stopwatch.Frequency);
        var settings = _options;
        _limiter = PartitionedRateLimiter.Create<string, string>(partition => RateLimitPartition.GetTokenBucketLimiter(
            partition,
            p => Bucket(PermitsOf(p), settings.RateLimitWindowSeconds)));
    }

    /// <summary>Takes one request permit of the caller's key and fleet; the refusal when either is spent.</summary>
    public async ValueTask<RateLimitRefusal?> TryRequestAsync(ApiCaller caller)
    {
        ArgumentNullException.ThrowIfNull(caller);
        return await TakeAsync("rk:" + caller.KeyId.ToString("N"), 1, "requests of this API key", "Security:RateLimitPermits", _options.RateLimitPermits).ConfigureAwait(false)
            ?? await TakeAsync("rf:" + caller.FleetId.ToString("N"), 1, "requests of this fleet", "Security:FleetRateLimitPermits", _options.FleetRateLimitPermits).ConfigureAwait(false);
    }

    /// <summary>Takes <paramref name="count"/> message permits of the caller's key and fleet; the refusal when either has too few.</summary>
    public async ValueTask<RateLimitRefusal?> TryMessagesAsync(ApiCaller caller, int count)
    {
        ArgumentNullException.ThrowIfNull(caller);
        if (count <= 0)
        {
            return null;
        }

        return await TakeAsync("mk:" + caller.KeyId.ToString("N"), count, "telemetry messages of this API key", "Security:MessageLimitPermits", _options.MessageLimitPermits).ConfigureAwait(false)
            ?? await TakeAsync("mf:" + caller.FleetId.ToString("N"), count, "telemetry messages of this fleet", "Security:FleetMessageLimitPermits", _options.FleetMessageLimitPermits).ConfigureAwait(false);
    }

    /// <summary>
    /// The refusal when <paramref name="address"/> has less than one whole failed authentication left (nothing is taken).
    /// </summary>
    /// <remarks>
    /// Not a zero-permit acquire: the token bucket refills by the elapsed fraction on every heartbeat of the partitioned
    /// limiter (100 ms), and a zero-permit acquire succeeds on any fraction above zero, so a spent bucket opened again
    /// within 100 ms although its next whole permit was 1,200 s away (3 per hour). The statistics count whole permits.
    /// </remarks>
    public RateLimitRefusal? FailedAuthBlocked(IPAddress? address)
    {
        if (_limiter.GetStatistics(AddressPartition(address)) is not { CurrentAvailablePermits: < 1 })
        {
            return null;
        }

        const string option = "Security:FailedAuthPermits";
        _metrics.CountRateLimited(option);
        // The bucket gains a permit within one replenishment period (it holds a fraction of one already).
        var period = Bucket(_options.FailedAuthPermits, _options.RateLimitWindowSeconds).ReplenishmentPeriod;
        return new RateLimitRefusal(
            "failed authentications from this client address", option, _options.FailedAuthPermits, _options.RateLimitWindowSeconds,
            Math.Max(1, (int)Math.Ceiling(period.TotalSeconds)));
    }

    /// <summary>Counts one failed authentication of <paramref name="address"/>.</summary>
    public void NoteFailedAuth(IPAddress? address)
    {
        using var lease = _limiter.AttemptAcquire(AddressPartition(address), 1);
    }

    /// <inheritdoc />
    public void Dispose() => _limiter.Dispose();

    /// <summary>The partition of a client address: IPv4 (and IPv4-mapped) per address, IPv6 per /64 network.</summary>
    internal static string AddressPartition(IPAddress? address)
    {
        if (address is null)
        {
            return "ip:none";
        }

        if (address.IsIPv4MappedToIPv6)
        {
            address = address.MapToIPv4();
        }

        if (address.AddressFamily == AddressFamily.InterNetworkV6)
        {
            var bytes = address.GetAddressBytes();
            return "ip6:" + Convert.ToHexStringLower(bytes.AsSpan(0, 8));
        }

        return "ip:" + address;
    }

    private long PermitsOf(string partition) => partition[..3] switch
    {
        "rk:" => _options.RateLimitPermits,
        "rf:" => _options.FleetRateLimitPermits,
        "mk:" => _options.MessageLimitPermits,
        "mf:" => _options.FleetMessageLimitPermits,
        _ => _options.FailedAuthPermits,
    };

    // A bucket of `permits` that refills `permits` per window: every second when it gains at least one token a second,
    // else one token every window/permits seconds.
    private static TokenBucketRateLimiterOptions Bucket(long permits, int windowS)
    {
        int limit = (int)Math.Min(permits, int.MaxValue);
        TimeSpan period;
        int perPeriod;
        if (limit >= windowS)
        {
            period = TimeSpan.FromSeconds(1);
            perPeriod = Math.Max(1, limit / windowS);
        }
        else
        {
            period = TimeSpan.FromSeconds((double)windowS / limit);
            perPeriod = 1;
        }

        return new TokenBucketRateLimiterOptions
        {
            TokenLimit = limit,
            ReplenishmentPeriod = period,
            TokensPerPeriod = perPeriod,
            QueueLimit = 0,
            // The partitioned limiter's own 100 ms heartbeat refills every bucket (and drops idle full ones): no timer per bucket.
            AutoReplenishment = false,
        };
    }

    /// <summary>
    /// Takes <paramref name="count"/> permits (at most the whole bucket) from this process's lease of the partition,
    /// leasing more from the cluster's bucket when the lease is spent or old; without a grain factory, or when the bucket
    /// cannot be reached, from this process's own bucket.
    /// </summary>
    private async ValueTask<RateLimitRefusal?> TakeAsync(string partition, int count, string what, string option, long permits)
    {
        // A request larger than the whole bucket takes the whole bucket (a token bucket cannot grant more than it holds).
        int take = (int)Math.Min(count, Math.Min(permits, int.MaxValue));
        if (_grains is null)
        {
            return Take(partition, take, what, option, permits);
        }

        var lease = _leases.GetOrAdd(partition, static _ => new Lease());
        long returned;
        lock (lease)
        {
            if (Stopwatch.GetTimestamp() < lease.ExpiresAt && lease.Available >= take)
            {
                lease.Available -= take;
                return null;
            }

            // Spent, too small or too old: what is left goes back to the bucket with the next lease.
            returned = lease.Available;
            lease.Available = 0;
        }

        int windowS = _options.RateLimitWindowSeconds;
        long wanted = Math.Max(take, LeaseSize(permits, windowS, _options.RateLimitLeaseSeconds));
        RateLimitGrant grant;
        try
        {
            grant = await _grains.GetGrain<IRateLimitGrain>(partition)
                .LeaseAsync(take, wanted, returned, permits, windowS)
                .WaitAsync(TimeSpan.FromMilliseconds(_options.RateLimitLeaseTimeoutMs))
                .ConfigureAwait(false);
        }
        catch (Exception ex) when (ex is TimeoutException or OrleansException or OperationCanceledException)
        {
            NoteLeaseFailure(partition, ex);
            return Take(partition, take, what, option, permits);
        }

        if (grant.Granted >= take)
        {
            lock (lease)
            {
                lease.Available += grant.Granted - take;
                lease.ExpiresAt = Stopwatch.GetTimestamp() + _leaseTicks;
            }

            return null;
        }

        _metrics.CountRateLimited(option);
        return new RateLimitRefusal(what, option, permits, windowS, Math.Max(1, (int)Math.Ceiling(grant.RetryAfterS)));
    }

    /// <summary>Permits one lease asks for: the refill of <paramref name="leaseS"/> seconds, at least 1, at most the bucket.</summary>
    internal static long LeaseSize(long permits, int windowS, double leaseS) =>
        Math.Clamp((long)Math.Ceiling(permits * leaseS / windowS), 1, permits);

    private void NoteLeaseFailure(string partition, Exception ex)
    {
        long now = Environment.TickCount64;
        long last = Interlocked.Read(ref _lastFailureLogged);
        if (now - last >= 60_000 && Interlocked.CompareExchange(ref _lastFailureLogged, now, last) == last)
        {
            _logger?.LogWarning(
                ex, "Rate limit {Partition}: the cluster's bucket did not answer; requests are judged by this process's own buckets meanwhile", partition[..2]);
        }
    }

    private RateLimitRefusal? Take(string partition, int take, string what, string option, long permits)
    {
        using var lease = _limiter.AttemptAcquire(partition, take);
        if (lease.IsAcquired)
        {
            return null;
        }

        _metrics.CountRateLimited(option);
        double retryS = lease.TryGetMetadata(MetadataName.RetryAfter, out TimeSpan retry) ? retry.TotalSeconds : _options.RateLimitWindowSeconds;
        return new RateLimitRefusal(what, option, permits, _options.RateLimitWindowSeconds, Math.Max(1, (int)Math.Ceiling(retryS)));
    }

    /// <summary>Permits this process holds of one partition's cluster bucket, and until when it may spend them.</summary>
    private sealed class Lease
    {
        public long Available;
        public long ExpiresAt;
    }
}
