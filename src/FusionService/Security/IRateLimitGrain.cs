// The one token bucket of a rate limit partition in the cluster.
namespace FusionService.Security;

/// <summary>
/// The token bucket of one rate-limit partition (a key's or a fleet's requests or messages) for the whole cluster,
/// keyed by the partition (<c>"rk:{keyId}"</c>, <c>"rf:{fleetId}"</c>, <c>"mk:..."</c>, <c>"mf:..."</c>). Processes take
/// permits from it in leases and spend them locally (<see cref="TenantRateLimiter"/>), so a key's limit holds for all
/// processes together instead of once per process.
/// </summary>
[Alias("FusionService.Security.IRateLimitGrain")]
public interface IRateLimitGrain : IGrainWithStringKey
{
    /// <summary>
    /// Gives back <paramref name="returned"/> unspent permits of an expired lease, then grants at least
    /// <paramref name="needed"/> and at most <paramref name="wanted"/> permits if the bucket holds
    /// <paramref name="needed"/>; otherwise grants none and says when it will. The bucket holds <paramref name="permits"/>
    /// and refills that many per <paramref name="windowS"/> seconds (the caller's settings).
    /// </summary>
    [Alias("Lease")]
    Task<RateLimitGrant> LeaseAsync(long needed, long wanted, long returned, long permits, int windowS);
}
