// How the track grains report and persist.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Tracking;

/// <summary>
/// Settings of section <c>Tracks</c> that the track grains read: checkpoints, fused-state spacing, the background writer,
/// the pending look-back and the store concurrency. The same section's keys for history reads (<c>MaxWindowHours</c>,
/// <c>SmoothedIntervalS</c>, <c>ReplayLeadHours</c>, <c>ReplayStretches</c>, <c>WarmUpRounds</c>, <c>FlushEveryPoints</c>)
/// belong to <c>History/TrackHistoryOptions</c>. Each key belongs to one of the two classes (a test checks); the table of
/// every setting is docs/settings.md.
/// </summary>
public sealed class TrackGrainOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Tracks";

    /// <summary>Wall-clock seconds between checkpoint writes of an active track (also written at deactivation). Default 10.</summary>
    [Range(0, 3600)]
    public double CheckpointIntervalS { get; set; } = 10;

    /// <summary>
    /// Data-time minutes between the filter checkpoints kept as history: a smoothed-track request starts its replay from
    /// the newest one before its window and splits a long window at the ones inside it, replaying the stretches side by
    /// side. A checkpoint is also written as soon as the track has moved on this far in data time (an upload of a past
    /// day gets them too). 0 keeps only the newest checkpoint. Default 10.
    /// </summary>
    [Range(0, 1440)]
    public double HistoryCheckpointSpacingMin { get; set; } = 10;

    /// <summary>Longest gap in data time between two stored fused states while data arrive, seconds. Default 1.</summary>
    [Range(0.01, 3600)]
    public double FusedStateIntervalS { get; set; } = 1;

    /// <summary>
    /// Rows (outcome updates and fused states) that may wait for the background writer before new deliveries to the
    /// tracks wait, and with them new ingest requests. Default 100000.
    /// </summary>
    [Range(1, 10_000_000)]
    public int WriteQueueCapacity { get; set; } = 100_000;

    /// <summary>Milliseconds between flushes of the background writer. Default 50.</summary>
    [Range(1, 60_000)]
    public int FlushIntervalMs { get; set; } = 50;

    /// <summary>
    /// Seconds a stop spends writing the queued outcome and fused-state rows, retrying while the store refuses.
    /// Default 10.
    /// </summary>
    [Range(0.1, 600)]
    public double DrainTimeoutS { get; set; } = 10;

    /// <summary>
    /// Data-time minutes before the newest checkpoint in which an activating track looks for stored measurements that no
    /// verdict has judged (pending: their hand-over died with a process, or was overtaken by a later commit's). The
    /// track then restores from a checkpoint before the oldest of them, so that it fuses them in order; without this
    /// they would stay pending for good. Older pending rows are left as they are. 0 turns the look-back off. Default 60.
    /// </summary>
    [Range(0, 1440)]
    public double PendingLookBackMin { get; set; } = 60;

    /// <summary>Largest number of track grains reading or writing the store at once (restores, checkpoints). Default 8.</summary>
    [Range(1, 1000)]
    public int MaxConcurrentStoreCalls { get; set; } = 8;
}
