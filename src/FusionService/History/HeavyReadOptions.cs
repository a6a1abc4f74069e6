// Admission limits of the history reads.
using System.ComponentModel.DataAnnotations;

namespace FusionService.History;

/// <summary>
/// Settings of section <c>HeavyReads</c>: how many history reads (track in every kind and format, distance,
/// diagnostics, explain) may run at once in this process, in all and per fleet. Their connections come from a pool of
/// their own (<c>Database:ReadMaxPoolSize</c>, <c>Database:ReadStatementTimeoutS</c>).
/// </summary>
public sealed class HeavyReadOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "HeavyReads";

    /// <summary>History reads running at once in this process, all fleets together; beyond, a request waits up to <see cref="QueueTimeoutMs"/>, then gets 503. Default 4.</summary>
    [Range(1, 1000)]
    public int MaxConcurrent { get; set; } = 4;

    /// <summary>History reads one fleet may run at once in this process; beyond, 429 at once. Default 2.</summary>
    [Range(1, 1000)]
    public int MaxConcurrentPerFleet { get; set; } = 2;

    /// <summary>How long a request waits for a free slot when all <see cref="MaxConcurrent"/> are taken, milliseconds; 0 answers 503 at once. Default 1000.</summary>
    [Range(0, 60_000)]
    public int QueueTimeoutMs { get; set; } = 1000;

    /// <summary>Retry-After of a refused history read, seconds. Default 2.</summary>
    [Range(1, 3600)]
    public int RetryAfterS { get; set; } = 2;
}
