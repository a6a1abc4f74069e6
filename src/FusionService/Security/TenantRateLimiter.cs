// Rate limits per resolved API key and fleet (requests and messages) and per client address (failed authentications).
using System.Net;
using System.Net.Sockets;
using System.Threading.RateLimiting;
using FusionService.Operations;
using Microsoft.Extensions.Options;

namespace FusionService.Security;

/// <summary>
/// Token buckets partitioned by the resolved key's id and its fleet's id (never by the raw <c>Authorization</c> header,
/// so spellings of one key share one bucket), counting requests and telemetry messages, and by client address for failed
/// authentications. Each bucket holds its permits and refills at that many per <see cref="SecurityOptions.RateLimitWindowSeconds"/>;
/// idle full buckets are dropped by the partitioned limiter.
/// </summary>
public sealed class TenantRateLimiter : IDisposable
{
    private readonly SecurityOptions _options;
    private readonly PartitionedRateLimiter<string> _limiter;
    private readonly ServiceMetrics _metrics;

    /// <summary>Creates the limiter from the options in force; refusals are counted in <paramref name="metrics"/>.</summary>
    public TenantRateLimiter(IOptions<SecurityOptions> options, ServiceMetrics metrics)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(metrics);
        _metrics = metrics;
        _options = options.Value;
        var settings = _options;
        _limiter = PartitionedRateLimiter.Create<string, string>(partition => RateLimitPartition.GetTokenBucketLimiter(
            partition,
            p => Bucket(PermitsOf(p), settings.RateLimitWindowSeconds)));
    }

    /// <summary>Takes one request permit of the caller's key and fleet; the refusal when either is spent.</summary>
    public RateLimitRefusal? TryRequest(ApiCaller caller)
    {
        ArgumentNullException.ThrowIfNull(caller);
        return Take("rk:" + caller.KeyId.ToString("N"), 1, "requests of this API key", "Security:RateLimitPermits", _options.RateLimitPermits)
            ?? Take("rf:" + caller.FleetId.ToString("N"), 1, "requests of this fleet", "Security:FleetRateLimitPermits", _options.FleetRateLimitPermits);
    }

    /// <summary>Takes <paramref name="count"/> message permits of the caller's key and fleet; the refusal when either has too few.</summary>
    public RateLimitRefusal? TryMessages(ApiCaller caller, int count)
    {
        ArgumentNullException.ThrowIfNull(caller);
        if (count <= 0)
        {
            return null;
        }

        return Take("mk:" + caller.KeyId.ToString("N"), count, "telemetry messages of this API key", "Security:MessageLimitPermits", _options.MessageLimitPermits)
            ?? Take("mf:" + caller.FleetId.ToString("N"), count, "telemetry messages of this fleet", "Security:FleetMessageLimitPermits", _options.FleetMessageLimitPermits);
    }

    /// <summary>The refusal when <paramref name="address"/> has used up its failed authentications (nothing is taken).</summary>
    public RateLimitRefusal? FailedAuthBlocked(IPAddress? address) =>
        Take(AddressPartition(address), 0, "failed authentications from this client address", "Security:FailedAuthPermits", _options.FailedAuthPermits);

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

    private RateLimitRefusal? Take(string partition, int count, string what, string option, long permits)
    {
        // A request larger than the whole bucket takes the whole bucket (a token bucket cannot grant more than it holds).
        int take = (int)Math.Min(count, Math.Min(permits, int.MaxValue));
        using var lease = _limiter.AttemptAcquire(partition, take);
        if (lease.IsAcquired)
        {
            return null;
        }

        _metrics.CountRateLimited(option);
        double retryS = lease.TryGetMetadata(MetadataName.RetryAfter, out TimeSpan retry) ? retry.TotalSeconds : _options.RateLimitWindowSeconds;
        return new RateLimitRefusal(what, option, permits, _options.RateLimitWindowSeconds, Math.Max(1, (int)Math.Ceiling(retryS)));
    }
}
