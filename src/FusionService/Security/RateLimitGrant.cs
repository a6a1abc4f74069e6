// What a cluster-wide rate-limit bucket granted.
namespace FusionService.Security;

/// <summary>
/// Permits granted by an <see cref="IRateLimitGrain"/> (0: refused) and, when refused, the seconds until the bucket holds
/// the permits asked for.
/// </summary>
/// <param name="Granted">Permits granted.</param>
/// <param name="RetryAfterS">Seconds until the bucket holds what was needed (0 when granted).</param>
[GenerateSerializer]
[Immutable]
[Alias("FusionService.Security.RateLimitGrant")]
public readonly record struct RateLimitGrant([property: Id(0)] long Granted, [property: Id(1)] double RetryAfterS);
