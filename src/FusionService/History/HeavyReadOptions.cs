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

    /// <summary>History reads running at once in this process, all fleets together. Default 4.</summary>
    [Range(1, 1000)]
    public int MaxConcurrent { get; set; } = 4;

    /// <summary>History reads one fleet may run at once in this process. Default 2.</summary>
    [Range(1, 1000)]
    public int MaxConcurrentPerFleet { get; set; } = 2;

    /// <summary>
    /// How long a request may wait for its slots, milliseconds: still waiting for its fleet's share then, it gets 429;
    /// for a slot of the process, 503. 0 answers at once. Default 10,000 (the dashboard's vehicle view asks for five
    /// history reads at once).
    /// </summary>
    [Range(0, 60_000)]
    public int QueueTimeoutMs { get; set; } = 10_000;

    /// <summary>
    /// Whether the processor work of smoothed tracks and distance (the filter's replay and the RTS smoother) runs on
    /// threads of the lowest OS scheduling priority (nice 19 on Linux), so that ingest on the same cores always goes
    /// first and the reads take only processor time nobody else wants. Default true; false runs it at normal priority.
    /// </summary>
    public bool LowCpuPriority { get; set; } = true;

    /// <summary>
    /// Processor cores the smoothing replays of all history reads of the process may use together, on average (the
    /// filter's forward passes; the backward pass and the storage read are not counted), while the process's own ingest
    /// commits (within the last second): a replay thread over the budget sleeps, so ingest keeps processor time beside
    /// heavy reads (docs/limits-and-keys.md); without ingest replays run at full speed, so never in a history-read
    /// process. 0: no cap. Default: a quarter of the processors (0.5 on 2).
    /// </summary>
    [Range(0.0, 1024.0)]
    public double ReplayCpuCores { get; set; } = Environment.ProcessorCount / 4.0;

    /// <summary>Retry-After of a refused history read, seconds. Default 2.</summary>
    [Range(1, 3600)]
    public int RetryAfterS { get; set; } = 2;
}
