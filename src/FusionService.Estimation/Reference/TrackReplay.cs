using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Reference;

/// <summary>
/// After-the-fact processing: from a start state (a checkpoint, or <see cref="TrackState.Empty"/>) run the filter over a
/// list of measurements in canonical order, with no lag window (late measurements are simply in their place), and smooth
/// the result with <see cref="RauchTungStriebelSmoother"/>. A reference for tests and benchmarks: the service replays and
/// smooths with <see cref="Smoothing.CompactedTrackReplay"/>.
/// </summary>
public static class TrackReplay
{
    /// <summary>Runs filter and smoother.</summary>
    /// <param name="processor">Options, noise profile and gate (the same as the live track's, for equal results).</param>
    /// <param name="start">State to start from; measurements before its time are reported too late.</param>
    /// <param name="measurements">Measurements; sorted here into canonical order, exact duplicates dropped.</param>
    public static ReplayResult Run(TrackProcessor processor, in TrackState start, IEnumerable<Measurement> measurements)
    {
        ArgumentNullException.ThrowIfNull(processor);
        ArgumentNullException.ThrowIfNull(measurements);
        var sorted = measurements.ToList();
        sorted.Sort((a, b) => VehicleTrack.CompareKey(a, b));
        var recorder = new ForwardPassRecorder();
        TrackState state = start;
        if (state.Phase == TrackPhase.Running)
        {
            recorder.Start(state.TimeUs, state.X, state.P, state.Plane);
        }

        var outcomes = new List<(Measurement, MeasurementOutcome)>(sorted.Count);
        for (int i = 0; i < sorted.Count; i++)
        {
            Measurement m = sorted[i];
            if (i > 0 && VehicleTrack.CompareKey(sorted[i - 1], m) == 0)
            {
                outcomes.Add((m, MeasurementOutcome.Of(sorted[i - 1].Equals(m) ? OutcomeKind.Duplicate : OutcomeKind.Conflict)));
                continue;
            }

            if (state.Phase == TrackPhase.Running && m.TimeUs < state.TimeUs)
            {
                outcomes.Add((m, MeasurementOutcome.Of(OutcomeKind.TooLate)));
                continue;
            }

            outcomes.Add((m, VehicleTrack.ProcessOrSkip(processor, ref state, m, recorder)));
        }

        var smoothed = recorder.Segments.Select(RauchTungStriebelSmoother.Smooth).ToList();
        return new ReplayResult(recorder.Segments, smoothed, outcomes, state);
    }

    /// <summary>
    /// The state a vehicle's track starts a round from after <paramref name="earlierRounds"/>: empty but for the receiver
    /// fit (<see cref="Models.GnssErrorVariogram"/>) the track made over those rounds, filtered one after another, each
    /// from an empty state but for that fit, whose chains of pairs are broken between rounds as when the van moves off.
    /// A track keeps its fit from day to day (it is part of the checkpointed state), so this is where a van's later
    /// rounds start from; tests and benchmarks use it to judge the fit once it has learned its receiver.
    /// </summary>
    /// <param name="processor">Options, noise profile and gate.</param>
    /// <param name="earlierRounds">The earlier rounds' measurements, oldest first.</param>
    public static TrackState StartAfter(TrackProcessor processor, IEnumerable<IEnumerable<Measurement>> earlierRounds)
    {
        ArgumentNullException.ThrowIfNull(processor);
        ArgumentNullException.ThrowIfNull(earlierRounds);
        Models.GnssErrorVariogram fit = default;
        foreach (IEnumerable<Measurement> round in earlierRounds)
        {
            var sorted = round.ToList();
            sorted.Sort((a, b) => VehicleTrack.CompareKey(a, b));
            TrackState state = TrackState.Empty;
            state.GnssErrorFit = fit;
            for (int i = 0; i < sorted.Count; i++)
            {
                if (i == 0 || VehicleTrack.CompareKey(sorted[i - 1], sorted[i]) != 0)
                {
                    VehicleTrack.ProcessOrSkip(processor, ref state, sorted[i], null);
                }
            }

            fit = state.GnssErrorFit;
            fit.Break();
        }

        TrackState start = TrackState.Empty;
        start.GnssErrorFit = fit;
        return start;
    }
}
