using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Smoothing;

/// <summary>
/// The recorded forward pass of one stretch of a replay, before smoothing (<see cref="CompactedTrackReplay.Forward"/>),
/// and the filter state it ended in: stretches of one track replayed side by side from stored checkpoints are joined
/// by <see cref="CompactedTrackReplay.Smooth"/> when each one's end state is the next one's start.
/// </summary>
/// <param name="Segments">Closed segments in time order (a track reset, a carry, an isolated stream or a GNSS error restart starts a new one).</param>
/// <param name="End">Filter state after the last measurement processed.</param>
/// <param name="Carried">The times the track took the vehicle to be carried, in time order.</param>
public sealed record ForwardPass(IReadOnlyList<CompactedSegment> Segments, TrackState End, IReadOnlyList<CarriedInterval> Carried);
