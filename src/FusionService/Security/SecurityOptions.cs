// Key caching, per-key and per-fleet rate limits, and the limit on failed authentications.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Security;

/// <summary>
/// Settings of section <c>Security</c>. Every rate limit is a token bucket that holds its number of permits and refills
/// at that many per <see cref="RateLimitWindowSeconds"/>: a client may use a whole window's permits at once, then as
/// they come back. The defaults are sized for a fleet of 1,000 vans that upload every 15 s through one shared ingest
/// key (4,000 requests a minute; GNSS at 1 Hz with wheel speed and IMU at 10 Hz make 21 messages a second per van,
/// 21,000 a second for the fleet) with headroom; see docs/limits-and-keys.md.
/// </summary>
public sealed class SecurityOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Security";

    /// <summary>Seconds a resolved key is remembered (a revocation by another process takes at most that long to apply). Default 30.</summary>
    [Range(0, 3600)]
    public int KeyCacheSeconds { get; set; } = 30;

    /// <summary>Seconds an unknown, revoked or expired key is remembered as such, so a repeated bad key costs no database lookup. Default 60.</summary>
    [Range(0, 3600)]
    public int UnknownKeyCacheSeconds { get; set; } = 60;

    /// <summary>Most unknown keys remembered at once (beyond, expired entries are dropped, then all). Default 10,000.</summary>
    [Range(1, 10_000_000)]
    public int UnknownKeyCacheEntries { get; set; } = 10_000;

    /// <summary>Length of the rate-limit window, seconds: every limit below refills over this long. Default 60.</summary>
    [Range(1, 3600)]
    public int RateLimitWindowSeconds { get; set; } = 60;

    /// <summary>
    /// Requests one key may make per window (HTTP requests, WebSocket opens and WebSocket telemetry frames). Default
    /// 12,000: three times the 4,000 a minute of 1,000 vans uploading every 15 s.
    /// </summary>
    [Range(1, int.MaxValue)]
    public int RateLimitPermits { get; set; } = 12_000;

    /// <summary>Requests all keys of one fleet together may make per window. Default 24,000.</summary>
    [Range(1, int.MaxValue)]
    public int FleetRateLimitPermits { get; set; } = 24_000;

    /// <summary>
    /// Telemetry messages (JSON messages, NDJSON lines, NMEA sentences) one key may send per window. Default
    /// 2,520,000: 42,000 a second, twice the 21,000 a second of 1,000 vans. A request with more messages than this
    /// takes the whole bucket.
    /// </summary>
    [Range(1, int.MaxValue)]
    public int MessageLimitPermits { get; set; } = 2_520_000;

    /// <summary>Telemetry messages all keys of one fleet together may send per window. Default 5,040,000.</summary>
    [Range(1, int.MaxValue)]
    public int FleetMessageLimitPermits { get; set; } = 5_040_000;

    /// <summary>
    /// Failed authentications (missing, malformed, unknown, revoked or expired key) one client address may cause per
    /// window; beyond, the address gets 429 for any key this process has not recently accepted. IPv6 addresses count per
    /// /64 network. The address is the connection's peer: behind a reverse proxy, every client shares the proxy's.
    /// Default 60.
    /// </summary>
    [Range(1, int.MaxValue)]
    public int FailedAuthPermits { get; set; } = 60;

    /// <summary>
    /// How long a process may spend permits it leased from the cluster's bucket of a key or fleet limit, seconds; a lease
    /// asks for this long's refill (at least the request's own permits). The cluster can go over a limit by at most this
    /// long's refill (docs/limits-and-keys.md); longer leases mean fewer calls to the bucket. Default 1.
    /// </summary>
    [Range(0.05, 3600)]
    public double RateLimitLeaseSeconds { get; set; } = 1;

    /// <summary>
    /// How long a request waits for a lease from the cluster's bucket, milliseconds, before this process's own bucket of
    /// the limit judges it instead (the silo holding the bucket failed, say). Default 2,000.
    /// </summary>
    [Range(10, 60_000)]
    public int RateLimitLeaseTimeoutMs { get; set; } = 2_000;

    /// <summary>Seconds between checks that the key of an open WebSocket stream is still valid (revoked or expired: the stream is closed with 1008). Default 30.</summary>
    [Range(1, 3600)]
    public int StreamKeyRecheckSeconds { get; set; } = 30;
}
