// Settings of section Webhooks.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Alerts;

/// <summary>
/// Settings of section <c>Webhooks</c>: how the dispatcher polls the outbox and retries. A failed attempt n (1, 2, ...)
/// is retried after min(<see cref="MaxDelayS"/>, <see cref="BaseDelayS"/> · 2^(n-1)) seconds, multiplied by a uniform
/// random factor in [1 - <see cref="JitterFraction"/>, 1 + <see cref="JitterFraction"/>] so that many failing deliveries
/// do not retry in lock-step. After <see cref="MaxAttempts"/> failed attempts a delivery is dead-lettered (listed and
/// re-queued through the API). Also: which destinations are allowed (https only unless <see cref="AllowHttp"/>; never
/// loopback, link-local, private, multicast or unspecified addresses outside <see cref="AllowedNetworks"/>, never the
/// service's own listening address and port), the per-fleet cap, the per-endpoint circuit breaker, the bounded read of
/// answers, the purge of delivered rows, and where the Data Protection key ring that encrypts secrets lives.
/// </summary>
public sealed class WebhookOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Webhooks";

    /// <summary>Whether this instance sends deliveries (rows stay in the outbox for another instance otherwise). Default true.</summary>
    public bool DispatcherEnabled { get; set; } = true;

    /// <summary>Timeout of one POST, seconds. Default 10.</summary>
    [Range(1, 300)]
    public double TimeoutS { get; set; } = 10;

    /// <summary>Delay after the first failure, seconds. Default 2.</summary>
    [Range(0.01, 3600)]
    public double BaseDelayS { get; set; } = 2;

    /// <summary>Longest delay between attempts, seconds. Default 3600.</summary>
    [Range(0.01, 86400)]
    public double MaxDelayS { get; set; } = 3600;

    /// <summary>Relative jitter of each delay, in [0, 1). Default 0.2.</summary>
    [Range(0, 0.99)]
    public double JitterFraction { get; set; } = 0.2;

    /// <summary>Milliseconds between outbox polls when nothing wakes the dispatcher. Default 1000.</summary>
    [Range(10, 600_000)]
    public int PollIntervalMs { get; set; } = 1000;

    /// <summary>How long a claimed row stays invisible to other claims while it is sent, seconds (above the timeout). Default 60.</summary>
    [Range(2, 3600)]
    public double LeaseS { get; set; } = 60;

    /// <summary>Rows claimed per poll. Default 32.</summary>
    [Range(1, 1000)]
    public int BatchSize { get; set; } = 32;

    /// <summary>Accept <c>http://</c> URLs (for tests and the demo). Default false: https only.</summary>
    public bool AllowHttp { get; set; }

    /// <summary>
    /// Networks in CIDR notation (e.g. <c>127.0.0.0/8</c>, <c>10.20.0.0/16</c>) a webhook may reach although they are
    /// loopback, link-local, private, multicast or unspecified (for tests, the demo, or a receiver inside your own
    /// network). The service's own listening address and port stay refused. Default none.
    /// </summary>
    public IList<string> AllowedNetworks { get; } = [];

    /// <summary>Most webhook subscriptions one fleet may have. Default 10.</summary>
    [Range(1, 1000)]
    public int MaxPerFleet { get; set; } = 10;

    /// <summary>Attempts per delivery before it is dead-lettered. Default 15 (with the default delays at least 4.1 h of retrying: 2 + 4 + ... + 2048 s, then 3 x 3600 s).</summary>
    [Range(1, 1000)]
    public int MaxAttempts { get; set; } = 15;

    /// <summary>Bytes of a receiver's answer body read at most (kept in the error of a failed attempt); the rest is never read. Default 1024.</summary>
    [Range(0, 65536)]
    public int MaxResponseBytes { get; set; } = 1024;

    /// <summary>Deliveries in flight at once in this process. Default 32.</summary>
    [Range(1, 1000)]
    public int MaxConcurrentDeliveries { get; set; } = 32;

    /// <summary>Deliveries in flight at once to one subscription, so a slow receiver holds at most this many slots. Default 4.</summary>
    [Range(1, 100)]
    public int MaxInFlightPerEndpoint { get; set; } = 4;

    /// <summary>Consecutive failed attempts after which a subscription's circuit opens (no attempts while open). Default 5.</summary>
    [Range(1, 1000)]
    public int BreakerFailures { get; set; } = 5;

    /// <summary>How long an open circuit stays open before one trial delivery is let through, seconds. Default 60.</summary>
    [Range(0.1, 86400)]
    public double BreakerOpenS { get; set; } = 60;

    /// <summary>
    /// Hours a delivered row (with its location payload) is kept. Default 24. Any row, delivered or not, is deleted once it
    /// is older than the data retention (<c>Database:RetentionDays</c>), whichever comes first.
    /// </summary>
    [Range(0, 87600)]
    public double DeliveredKeepHours { get; set; } = 24;

    /// <summary>Seconds between purges of old outbox rows. Default 600.</summary>
    [Range(1, 86400)]
    public double PurgeIntervalS { get; set; } = 600;

    /// <summary>
    /// Directory of the ASP.NET Core Data Protection key ring that encrypts webhook secrets. Default empty: the key ring
    /// is stored in PostgreSQL (table <c>data_protection_keys</c>), so every process on the same database can decrypt
    /// every secret. Set a directory (shared by all processes, e.g. a mounted secret volume) to keep the keys out of the
    /// database, so that a copy of the database alone does not reveal the secrets.
    /// </summary>
    public string? KeyRingDirectory { get; set; }

    /// <summary>Delay before attempt <paramref name="failedAttempts"/> + 1, given a uniform random number <paramref name="unit"/> in [0, 1).</summary>
    public TimeSpan BackoffDelay(int failedAttempts, double unit)
    {
        double exponent = Math.Min(Math.Max(failedAttempts, 1) - 1, 60);
        double seconds = Math.Min(MaxDelayS, BaseDelayS * Math.Pow(2, exponent));
        return TimeSpan.FromSeconds(seconds * (1 + (JitterFraction * ((2 * unit) - 1))));
    }
}
