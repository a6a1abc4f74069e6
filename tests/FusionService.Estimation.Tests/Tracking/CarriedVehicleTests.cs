using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>
/// Issue 12, carried vehicles and long parks, on the invented drives of <see cref="RealisticDrives"/> (a consumer
/// receiver whose error is 75 % correlated over 60 s). The targets are the issue's own (product requirements, not
/// published values): a towed van is recognised within 20 s of lift-off, without a reset storm, and its error after
/// lift-off stays within 3 times that of a plain GNSS-only filter on the same fixes; a van parked 3 h beside a building
/// is never relocated and its smoothed path stays under 50 m.
/// </summary>
public sealed class CarriedVehicleTests(ITestOutputHelper output)
{
    [Fact]
    public void Issue12_a_towed_van_is_recognised_within_20_s_and_follows_gnss_without_resets()
    {
        RealisticDrive drive = RealisticDrives.Tow();
        ScenarioRun run = drive.Generate();
        long liftUs = drive.Suite.CarriedSpans[0].StartTimeUs;
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        ReplayResult all = TrackReplay.Run(processor, TrackState.Empty, run.Measurements);
        ReplayResult gnssOnly = TrackReplay.Run(
            processor, TrackState.Empty, run.Measurements.Where(m => m.Kind is SensorKind.GnssPosition or SensorKind.GnssVelocity));

        long recognisedUs = all.Outcomes.Where(o => o.Outcome.Carried && o.Measurement.TimeUs >= liftUs).Select(o => o.Measurement.TimeUs).DefaultIfEmpty(long.MaxValue).Min();
        int resets = all.Outcomes.Count(o => o.Outcome.Kind == OutcomeKind.TrackReset);
        double rmse = RmseAfter(run.Truth, all, liftUs), baseline = RmseAfter(run.Truth, gnssOnly, liftUs);
        output.WriteLine($"recognised {(recognisedUs - liftUs) / 1e6:F1} s after lift-off; {resets} resets; RMSE after lift-off {rmse:F2} m, GNSS-only filter {baseline:F2} m");

        Assert.True(recognisedUs - liftUs <= 20_000_000, $"carry recognised {(recognisedUs - liftUs) / 1e6} s after lift-off");
        Assert.Equal(0, resets);
        Assert.True(rmse <= 3.0 * baseline, $"RMSE {rmse:F2} m against a GNSS-only {baseline:F2} m");
        Assert.DoesNotContain(all.Outcomes, o => o.Outcome.Carried && o.Measurement.TimeUs < liftUs);
    }

    /// <summary>
    /// Issue 12, step 6: distance reports driven and carried metres apart. On the invented tow the carried part of the
    /// smoothed distance must match the truth's path while lifted (2.5 km at about 4 m/s) and the driven part the rest, each
    /// within 2 % (the project's 0.5 % distance goal, loosened for the seconds a carry takes to be recognised: 5 s at
    /// 4 m/s is 20 m, 0.8 % of the carry).
    /// </summary>
    [Fact]
    public void Issue12_distance_splits_driven_and_carried_metres_on_a_tow()
    {
        RealisticDrive drive = RealisticDrives.Tow();
        ScenarioRun run = drive.Generate();
        var span = drive.Suite.CarriedSpans[0];
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        ForwardPass pass = CompactedTrackReplay.Forward(processor, TrackState.Empty, run.Measurements, 1_000_000);
        var segments = CompactedTrackReplay.Smooth([pass]);
        long fromUs = run.Truth.StartTimeUs + 60_000_000, toUs = run.Truth.EndTimeUs;
        DistanceEstimate d = TrapezoidDistanceIntegrator.Integrate(segments, fromUs, toUs, pass.Carried);
        double trueCarried = TruePathM(run.Truth, span.StartTimeUs, span.EndTimeUs);
        double trueAll = TruePathM(run.Truth, fromUs, toUs);
        output.WriteLine($"carried {d.CarriedM:F0} m (truth {trueCarried:F0} m), driven {d.DistanceM - d.CarriedM:F0} m (truth {trueAll - trueCarried:F0} m); carries {string.Join(", ", pass.Carried.Select(c => $"{(c.StartUs - span.StartTimeUs) / 1e6:F1}..{(c.EndUs - span.EndTimeUs) / 1e6:F1} s"))} from the truth's");

        Assert.Single(pass.Carried);
        AssertNear.Equal(trueCarried, d.CarriedM, 0.02 * trueCarried, "carried distance (m)");
        AssertNear.Equal(trueAll - trueCarried, d.DistanceM - d.CarriedM, 0.02 * (trueAll - trueCarried), "driven distance (m)");
        Assert.Equal(0, TrapezoidDistanceIntegrator.Integrate(segments, fromUs, span.StartTimeUs - 1_000_000, pass.Carried).CarriedM);
    }

    private static double TruePathM(TruthTrajectory truth, long fromUs, long toUs)
    {
        double distance = 0;
        TruthSample? previous = null;
        foreach (TruthSample s in truth.Samples)
        {
            if (s.TimeUs < fromUs || s.TimeUs >= toUs)
            {
                continue;
            }

            if (previous is { } p)
            {
                distance += Math.Sqrt(((s.EastM - p.EastM) * (s.EastM - p.EastM)) + ((s.NorthM - p.NorthM) * (s.NorthM - p.NorthM)));
            }

            previous = s;
        }

        return distance;
    }

    [Fact]
    public void Issue12_a_van_parked_3_h_beside_a_building_is_never_relocated_and_its_smoothed_path_stays_short()
    {
        ScenarioRun run = RealisticDrives.ParkBesideBuilding().Generate();
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        ReplayResult replay = TrackReplay.Run(processor, TrackState.Empty, run.Measurements);
        int resets = replay.Outcomes.Count(o => o.Outcome.Kind == OutcomeKind.TrackReset);
        bool carried = replay.Outcomes.Any(o => o.Outcome.Carried);
        double pathM = 0;
        GeodeticPoint? previous = null;
        foreach (SmoothedSegment segment in replay.Smoothed)
        {
            for (int k = 0; k < segment.Count; k++)
            {
                double e = segment.Means[k][EastM], n = segment.Means[k][NorthM];
                GeodeticPoint p = segment.Planes[k].ToGeodetic(new EnuPoint(e, n, -((e * e) + (n * n)) / (2.0 * Wgs84.SemiMajorAxisM)));
                if (previous is GeodeticPoint q)
                {
                    pathM += VincentyInverse.Compute(q, p).DistanceM;
                }

                previous = p;
            }
        }

        output.WriteLine($"{resets} resets, carried {carried}, smoothed path {pathM:F1} m over 3 h");
        Assert.Equal(0, resets);
        Assert.False(carried, "a parked van was taken for a carried one");
        Assert.True(pathM <= 50.0, $"smoothed path {pathM:F1} m");
    }

    /// <summary>
    /// Issue 12, relocation only with corroboration: beside a building, multipath of 80-120 m (beyond the 75 m reset
    /// distance) for 20-40 s must not relocate a van whose wheels say it stands; the same van's fixes moving 500 m away
    /// for good (it was moved while its GNSS was silent) relocate it, but only after the longer standstill wait.
    /// </summary>
    [Fact]
    public void Issue12_a_standing_van_is_relocated_by_positions_only_after_a_long_disagreement()
    {
        RealisticDrive park = RealisticDrives.ParkBesideBuilding();
        RealisticDrive strongMultipath = park with
        {
            Suite = park.Suite with { GnssRandomMultipath = new MultipathProcess { MeanGapS = 300.0, BiasMinM = 80.0, BiasMaxM = 120.0, DurationMinS = 20.0, DurationMaxS = 40.0 } },
        };
        ScenarioRun run = strongMultipath.Generate();
        var options = new TrackOptions();
        var processor = new TrackProcessor(options, NoiseProfile.DeliveryVan);
        ReplayResult replay = TrackReplay.Run(processor, TrackState.Empty, run.Measurements);
        int episodes = MeasurementGenerator.MultipathEpisodesOf(strongMultipath.Truth, strongMultipath.Suite, strongMultipath.Seed).Count;
        Assert.True(episodes >= 20, $"only {episodes} multipath episodes");
        Assert.Equal(0, replay.Outcomes.Count(o => o.Outcome.Kind == OutcomeKind.TrackReset));

        // From an hour in, every fix lies 500 m north: the van stands elsewhere now.
        long movedUs = run.Truth.StartTimeUs + 3_600_000_000;
        double degreesPer500M = 500.0 / 111_200.0;
        var moved = run.Measurements.Where(m => m.TimeUs < movedUs + 600_000_000).Select(m => m.Kind == SensorKind.GnssPosition && m.TimeUs >= movedUs
            ? Measurement.GnssPosition(m.TimeUs, m.MessageKey, m.Value0 + degreesPer500M, m.Value1, m.Value2)
            : m);
        ReplayResult relocated = TrackReplay.Run(processor, TrackState.Empty, moved);
        long resetUs = relocated.Outcomes.Where(o => o.Outcome.Kind == OutcomeKind.TrackReset).Select(o => o.Measurement.TimeUs).DefaultIfEmpty(long.MaxValue).Min();
        output.WriteLine($"{episodes} episodes of 80-120 m, no reset; moved 500 m: reset {(resetUs - movedUs) / 1e6:F0} s later");
        Assert.InRange(resetUs - movedUs, (long)(options.ResetAfterStationaryS * 1e6), (long)((options.ResetAfterStationaryS + 30) * 1e6));
    }

    private static double RmseAfter(TruthTrajectory truth, ReplayResult replay, long fromUs)
    {
        double sum = 0;
        int count = 0;
        foreach (IReadOnlyList<ForwardStep> segment in replay.Forward)
        {
            foreach (ForwardStep step in segment)
            {
                if (step.TimeUs < fromUs || step.TimeUs % 1_000_000 != 0 || !truth.Covers(step.TimeUs))
                {
                    continue;
                }

                (double de, double dn) = truth.OffsetOf(step.TimeUs, step.Plane, step.Filtered[EastM], step.Filtered[NorthM]);
                sum += (de * de) + (dn * dn);
                count++;
            }
        }

        return Math.Sqrt(sum / count);
    }
}
