using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Smoothing;

/// <summary>
/// After-the-fact filtering and bounded-memory smoothing: like <see cref="Reference.TrackReplay"/>, but the forward pass is
/// recorded by a <see cref="CompactingStepRecorder"/>, so memory grows with the number of recorded instants (one per
/// <c>recordIntervalUs</c>), not with the number of measurements. This is the smoothing the service serves; the full-step
/// smoother beside the tests is in <c>Reference/</c>.
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
    /// <returns>The smoothed segments, in time order (a track reset, a carry, an isolated stream or a GNSS error restart starts a new one).</returns>
    /// <exception cref="ArgumentException">The measurements are not in canonical order.</exception>
    public static IReadOnlyList<SmoothedSegment> Run(
        TrackProcessor processor, in TrackState start, IEnumerable<Measurement> measurements, long recordIntervalUs, long discardBeforeUs = long.MinValue,
        int expectedInstants = 0, SegmentArrayPool? pool = null) =>
        Smooth([Forward(processor, start, measurements, recordIntervalUs, discardBeforeUs, expectedInstants, pool)]);

    /// <summary>
    /// The forward half of <see cref="Run"/>: filters and records, without smoothing. Parameters as for <see cref="Run"/>.
    /// </summary>
    /// <exception cref="ArgumentException">The measurements are not in canonical order.</exception>
    public static ForwardPass Forward(
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

        var carried = new List<CarriedInterval>();
        long carriedSinceUs = state.Carried ? Math.Max(state.CarriedSinceUs, state.TimeUs) : long.MinValue;
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

            VehicleTrack.ProcessOrSkip(processor, ref state, m, recorder);
            if (state.Carried && carriedSinceUs == long.MinValue)
            {
                carriedSinceUs = state.CarriedSinceUs;
            }
            else if (!state.Carried && carriedSinceUs != long.MinValue)
            {
                CarriedInterval.Append(carried, new CarriedInterval(carriedSinceUs, m.TimeUs));
                carriedSinceUs = long.MinValue;
            }
        }

        if (carriedSinceUs != long.MinValue)
        {
            CarriedInterval.Append(carried, new CarriedInterval(carriedSinceUs, state.TimeUs));
        }

        recorder.Complete();
        return new ForwardPass(recorder.Segments, state, carried);
    }

    /// <summary>
    /// Smooths forward passes of consecutive stretches of one track: where a stretch started from the state the previous
    /// one ended in (a stored checkpoint; the caller has checked that they are the same), the previous one's last
    /// segment and its first are joined into one (<see cref="CompactedSegment.AppendContinuation"/>), so the backward
    /// pass runs across the seam as if the stretches had been filtered in one go.
    /// </summary>
    /// <param name="parts">Forward passes in time order; each part after the first started from a running state.</param>
    /// <returns>The smoothed segments in time order.</returns>
    /// <exception cref="ArgumentException">A part does not begin where the previous one ended.</exception>
    public static IReadOnlyList<SmoothedSegment> Smooth(IReadOnlyList<ForwardPass> parts)
    {
        ArgumentNullException.ThrowIfNull(parts);
        var joined = new List<CompactedSegment>();
        foreach (ForwardPass part in parts)
        {
            int from = 0;
            if (joined.Count > 0 && part.Segments.Count > 0)
            {
                joined[^1].AppendContinuation(part.Segments[0]);
                from = 1;
            }

            for (int i = from; i < part.Segments.Count; i++)
            {
                joined.Add(part.Segments[i]);
            }
        }

        var result = new List<SmoothedSegment>(joined.Count);
        foreach (CompactedSegment segment in joined)
        {
            CompactedRauchTungStriebelSmoother.Smooth(segment);
            result.Add(segment.ToSmoothedSegment());
        }

        return result;
    }
}
