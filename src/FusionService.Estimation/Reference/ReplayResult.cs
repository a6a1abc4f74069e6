using FusionService.Estimation.Measurements;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Reference;

/// <summary>The result of <see cref="TrackReplay.Run"/>: forward-filtered steps, smoothed segments, outcomes and the final state.</summary>
/// <param name="Forward">Forward steps per segment (a track reset, a carry, an isolated stream or a GNSS error restart starts a new segment).</param>
/// <param name="Smoothed">RTS-smoothed segments, one per forward segment.</param>
/// <param name="Outcomes">Each replayed measurement with its outcome, in processing order.</param>
/// <param name="Final">Track state after the last measurement.</param>
public sealed record ReplayResult(
    IReadOnlyList<IReadOnlyList<ForwardStep>> Forward,
    IReadOnlyList<SmoothedSegment> Smoothed,
    IReadOnlyList<(Measurement Measurement, MeasurementOutcome Outcome)> Outcomes,
    TrackState Final);
