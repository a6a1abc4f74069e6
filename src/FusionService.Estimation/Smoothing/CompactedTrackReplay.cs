using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Smoothing;

/// <summary>
/// After-the-fact filtering and bounded-memory smoothing: like <see cref="TrackReplay"/>, but the forward pass is
/// recorded by a <see cref="CompactingStepRecorder"/>, so memory grows with the number of recorded instants (one per
/// <c>recordIntervalUs</c>), not with the number of measurements.
/// </summary>
public static class CompactedTrackReplay
{
    /// <summary>Runs the filter from <paramref name="start"/> over <paramref name="measurements"/> and smooths every segment.</summary>
    /// <param name="processor">Options, noise profile and gate (the live track's, for equal results).</param>
    /// <param name="start">State to start from (a checkpoint or <see cref="TrackState.Empty"/>).</param>
    /// <param name="measurements">Measurements in canonical order (<see cref="VehicleTrack.CompareKey"/>); measurements
    /// with the key of their predecessor are skipped (duplicates), those before the running state's time too.</param>
    /// <param name="recordIntervalUs">Least spacing of the smoothed instants, microseconds (0: every distinct instant).</param>
    /// <param name="discardBeforeUs">Smoothed instants before this time (Unix microseconds) are not kept, except the last
    /// one at or before it (see <see cref="CompactingStepRecorder"/>).</param>
    /// <param name="expectedInstants">Room for this many smoothed instants made up front (see <see cref="CompactingStepRecorder"/>); 0 to let it grow from small.</param>
    /// <param name="pool">Where the segments' arrays come from; dispose the returned segments to give them back (null: new arrays).</param>
    /// <returns>The smoothed segments, in time order (a track reset starts a new one).</returns>
    /// <exception cref="ArgumentException">The measurements are not in canonical order.</exception>
    public static IReadOnlyList<SmoothedSegment> Run(
        TrackProcessor processor, in TrackState start, IEnumerable<Measurement> measurements, long recordIntervalUs, long discardBeforeUs = long.MinValue,
        int expectedInstants = 0, SegmentArrayPool? pool = null)
    {
        ArgumentNullException.ThrowIfNull(processor);
        ArgumentNullException.ThrowIfNull(measurements);
        var recorder = new CompactingStepRecorder(recordIntervalUs, discardBeforeUs, expectedInstants, pool);
        TrackState state = start;
        if (state.Phase == TrackPhase.Running)
        {
            recorder.Start(state.TimeUs, state.X, state.P, state.Plane);
        }

        bool first = true;
        Measurement previous = default;
        foreach (Measurement m in measurements)
        {
            if (!first)
            {
                int order = VehicleTrack.CompareKey(previous, m);
                if (order > 0)
                {
                    throw new ArgumentException($"measurements are not in canonical order at {m.TimeUs} us", nameof(measurements));
                }

                if (order == 0)
                {
                    continue;
                }
            }

            first = false;
            previous = m;
            if (state.Phase == TrackPhase.Running && m.TimeUs < state.TimeUs)
            {
                continue;
            }

            processor.Process(ref state, m, recorder);
        }

        recorder.Complete();
        var result = new List<SmoothedSegment>(recorder.Segments.Count);
        foreach (CompactedSegment segment in recorder.Segments)
        {
            CompactedRauchTungStriebelSmoother.Smooth(segment);
            result.Add(segment.ToSmoothedSegment());
        }

        return result;
    }
}
