// Limits of the track history and distance endpoints.
using System.ComponentModel.DataAnnotations;

namespace FusionService.History;

/// <summary>
/// Settings of section <c>Tracks</c> that the history reads use (track, distance, smoothing replay, warm-up, streaming).
/// The same section's keys for the live track grains (<c>CheckpointIntervalS</c>, <c>HistoryCheckpointSpacingMin</c>,
/// <c>FusedStateIntervalS</c>, <c>WriteQueueCapacity</c>, <c>FlushIntervalMs</c>, <c>DrainTimeoutS</c>,
/// <c>PendingLookBackMin</c>, <c>MaxConcurrentStoreCalls</c>) belong to <c>Tracking/TrackGrainOptions</c>. Each key belongs
/// to one of the two classes (a test checks); the table of every setting is docs/settings.md.
/// </summary>
public sealed class TrackHistoryOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Tracks";

    /// <summary>Longest window one track or distance request may cover, hours. Default 24.</summary>
    [Range(0.01, 24 * 31)]
    public double MaxWindowHours { get; set; } = 24;

    /// <summary>
    /// Spacing of the smoothed instants, seconds (the compacting smoother keeps one instant per interval; a smaller
    /// <c>step</c> lowers it down to 0.1 s for that request). Default 1.
    /// </summary>
    [Range(0.1, 60)]
    public double SmoothedIntervalS { get; set; } = 1;

    /// <summary>
    /// How far before <c>from</c> the smoother may start its forward pass, hours: from the newest stored checkpoint at or
    /// before <c>from</c> if it is this recent, otherwise from the first stored measurement after <c>from</c> minus this
    /// lead. Default 2.
    /// </summary>
    [Range(0, 48)]
    public double ReplayLeadHours { get; set; } = 2;

    /// <summary>
    /// Stretches a smoothed-track replay is split into at most, each filtered on its own thread from a checkpoint the
    /// track stored inside the window (see <c>Tracks:HistoryCheckpointSpacingMin</c>); 1 replays in one go. The result is
    /// the same either way. Default: the number of processors, at most 8.
    /// </summary>
    [Range(1, 64)]
    public int ReplayStretches { get; set; } = Math.Clamp(Environment.ProcessorCount, 1, 8);

    /// <summary>
    /// Rounds of the smoothed-track code run at start-up on invented data, so that the first requests do not pay for
    /// the compilation of their code (see <c>SmoothingWarmUp</c>); 0 turns it off. Default 4.
    /// </summary>
    [Range(0, 100)]
    public int WarmUpRounds { get; set; } = 4;

    /// <summary>Points written between two flushes of a streamed response. Default 512.</summary>
    [Range(1, 1_000_000)]
    public int FlushEveryPoints { get; set; } = 512;
}
