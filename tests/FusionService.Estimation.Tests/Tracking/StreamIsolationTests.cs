using FusionService.Estimation.Geodesy;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>
/// Issue 12, step 9: one stream replaced by a consistently wrong one is isolated by <see cref="StreamAgreement"/> (fault
/// detection and isolation by analytical redundancy: Chow and Willsky 1984; Gertler 1998). The targets are the issue's
/// own (product requirements, not published values): smoothed RMSE within 1.5 times that of the same drive without the
/// stream, at most 2 resets, the stream named as isolated. The drives are the invented clean-sky rounds of
/// <see cref="RealisticDrives"/>; the wrong streams are a gyro with the wrong sign and a GNSS course 30 degrees off the path.
/// </summary>
public sealed class StreamIsolationTests(ITestOutputHelper output)
{
    private static readonly double CourseOffsetRad = Angles.DegreesToRadians(30.0);

    private static readonly TrackProcessor Processor = new(new TrackOptions(), NoiseProfile.DeliveryVan);

    [Theory]
    [InlineData(1201)]
    [InlineData(1301)]
    public void Issue12_a_gyro_with_the_wrong_sign_is_isolated_and_does_not_drag_the_track(int seed)
    {
        ScenarioRun run = RealisticDrives.CleanSky(seed).Generate();
        ReplayResult faulty = Replay(run, m => m.Kind == SensorKind.Imu ? Measurement.Imu(m.TimeUs, m.MessageKey, -m.Value0, m.Value1) : m);
        ReplayResult without = Replay(run, m => m.Kind == SensorKind.Imu ? null : m);

        AssertIsolatedAndClose(run, faulty, without, SensorKind.Imu, "gyro");
        Assert.True(faulty.Final.Agreement.GyroIsolated, "the gyro is still isolated at the end of the drive");
        Assert.False(faulty.Final.Agreement.CourseIsolated, "the GNSS course, which is right, stays trusted");
        Assert.All(
            faulty.Outcomes.Where(o => o.Measurement.Kind == SensorKind.Imu && o.Measurement.TimeUs > faulty.Final.Agreement.GyroIsolatedSinceUs),
            o => Assert.Equal(OutcomeKind.Unused, o.Outcome.Kind));
    }

    [Theory]
    [InlineData(1201)]
    [InlineData(1301)]
    public void Issue12_a_course_30_degrees_off_the_path_is_isolated_and_does_not_drag_the_track(int seed)
    {
        ScenarioRun run = RealisticDrives.CleanSky(seed).Generate();
        ReplayResult faulty = Replay(run, m => m.Kind == SensorKind.GnssVelocity && !double.IsNaN(m.Value1)
            ? Measurement.GnssVelocity(m.TimeUs, m.MessageKey, m.Value0, (m.Value1 + CourseOffsetRad) % (2 * Math.PI), m.Value2)
            : m);
        ReplayResult without = Replay(run, m => m.Kind == SensorKind.GnssVelocity ? Measurement.GnssVelocity(m.TimeUs, m.MessageKey, m.Value0, double.NaN, m.Value2) : m);

        AssertIsolatedAndClose(run, faulty, without, SensorKind.GnssVelocity, "course");
        Assert.True(faulty.Final.Agreement.CourseIsolated, "the course is still isolated at the end of the drive");
        Assert.InRange(faulty.Final.Agreement.CourseOffsetRad, CourseOffsetRad - 0.1, CourseOffsetRad + 0.1);
        Assert.False(faulty.Final.Agreement.GyroIsolated, "the gyro, which is right, stays trusted");
    }

    /// <summary>
    /// The turn that isolates a gyro of the wrong sign has already carried the position along the wrong heading, and the
    /// GNSS error states explain the offset from the fixes: the first fix after the isolation widens the position by its
    /// offset and restarts the error states, as the fix that isolates a wrong course does. On these 16 clean-sky drives
    /// the truth lay inside the filtered 95 % ellipse 64.6 % of the time in the two minutes after the isolation before
    /// that change, 89.5 % after (whole drives 93.6 and 96.6 %); the 64-seed row of `./build.sh bench consistency 64 gyro`
    /// went from 92.6 to 95.0 %.
    /// </summary>
    [Fact]
    public void Issue12_after_a_wrong_gyro_is_isolated_the_filtered_ellipse_holds_the_truth_again()
    {
        long afterCount = 0, afterInside = 0, driveCount = 0, driveInside = 0;
        for (int r = 0; r < 16; r++)
        {
            ScenarioRun run = RealisticDrives.CleanSky(1201 + (r * 100)).Generate();
            ReplayResult faulty = Replay(run, m => m.Kind == SensorKind.Imu ? Measurement.Imu(m.TimeUs, m.MessageKey, -m.Value0, m.Value1) : m);
            long isolatedUs = faulty.Outcomes.Where(o => o.Outcome.Isolated).Select(o => o.Measurement.TimeUs).DefaultIfEmpty(long.MaxValue).Min();
            Assert.True(isolatedUs != long.MaxValue, $"drive {r}: the gyro was never isolated");
            (_, long n, long inside) = TruthTally.Filtered(run, faulty);
            driveCount += n;
            driveInside += inside;
            (long windowCount, long windowInside) = TruthTally.FilteredBetween(run, faulty, isolatedUs, isolatedUs + 120_000_000);
            afterCount += windowCount;
            afterInside += windowInside;
        }

        double after = (double)afterInside / afterCount, drive = (double)driveInside / driveCount;
        output.WriteLine($"inside the filtered 95 % ellipse: {after:P1} of {afterCount} s in the 2 min after the isolation, {drive:P1} of whole drives");
        Assert.True(after >= 0.85, $"{after:P1} in the two minutes after the isolation");
        // The lower end of the product's 93-97 % band (issue 12).
        Assert.True(drive >= 0.93, $"{drive:P1} over whole drives");
    }

    [Fact]
    public void Issue12_no_stream_is_isolated_on_the_realistic_drives_with_every_sensor_right()
    {
        // Multipath episodes, an outage, a tow, a 3 h park beside a building and an HDOP-only receiver, two seeds each:
        // none of them is a wrong stream. Seed 4402 starts inside a multipath episode: judged on its first two chords
        // its right course was isolated 12 s in (found by the 64-seed consistency report).
        foreach (RealisticDrive drive in RealisticDrives.All().Concat(RealisticDrives.All(100)).Append(RealisticDrives.Multipath(4402)))
        {
            ScenarioRun run = drive.Generate();
            ReplayResult replay = TrackReplay.Run(Processor, TrackState.Empty, run.Measurements);
            var isolated = replay.Outcomes.FirstOrDefault(o => o.Outcome.Isolated);
            Assert.True(
                !isolated.Outcome.Isolated,
                $"{drive.Name} (seed {drive.Seed}): {isolated.Measurement.Kind} isolated at {isolated.Measurement.TimeUs}");
        }
    }

    [Fact]
    public void Issue12_a_gyro_that_agrees_again_is_readmitted()
    {
        // The gyro's sign is wrong for the first 10 minutes (a unit installed upside down, then fixed at a stop).
        ScenarioRun run = RealisticDrives.CleanSky().Generate();
        long fixedUs = run.Measurements[0].TimeUs + 600_000_000;
        ReplayResult replay = Replay(run, m => m.Kind == SensorKind.Imu && m.TimeUs < fixedUs ? Measurement.Imu(m.TimeUs, m.MessageKey, -m.Value0, m.Value1) : m);

        var isolated = replay.Outcomes.Where(o => o.Measurement.Kind == SensorKind.Imu && o.Outcome.Isolated).ToList();
        Assert.NotEmpty(isolated);
        Assert.False(replay.Final.Agreement.GyroIsolated, "the gyro is fused again at the end");
        long readmittedUs = replay.Outcomes.Last(o => o.Measurement.Kind == SensorKind.Imu && o.Outcome.Isolated).Measurement.TimeUs;
        output.WriteLine($"isolated {(isolated[0].Measurement.TimeUs - run.Measurements[0].TimeUs) / 1e6:F0} s into the drive, re-admitted {(readmittedUs - fixedUs) / 1e6:F0} s after the fix");
        Assert.True(readmittedUs > fixedUs, "never re-admitted while still wrong");
        Assert.Contains(replay.Outcomes, o => o.Measurement.Kind == SensorKind.Imu && o.Measurement.TimeUs > readmittedUs && o.Outcome.Kind == OutcomeKind.Accepted);
    }

    [Fact]
    public void A_turn_whose_gyro_and_course_disagree_isolates_the_gyro_and_a_straight_road_judges_nothing()
    {
        // Synthetic: 10 m/s, a left turn of 1 rad over 10 s seen by the course (1 Hz) and by a gyro (10 Hz) reading the
        // opposite sign; then the same turn on a straight road (course constant) decides nothing.
        var options = new TrackOptions();
        var agreement = StreamAgreement.Empty;
        const long startUs = 1_700_000_000_000_000;
        double courseRad = 0.0;
        for (int k = 0; k <= 100; k++)
        {
            long t = startUs + (k * 100_000);
            if (k % 10 == 0)
            {
                agreement.ObserveVelocity(Measurement.GnssVelocity(t, (ulong)k, 10.0, courseRad, 0.2), options, 0.0);
                courseRad -= 0.1; // counter-clockwise turn: the course (clockwise from north) falls
            }

            agreement.ObserveImu(Measurement.Imu(t, (ulong)(1000 + k), -0.1, double.NaN));
        }

        Assert.True(agreement.GyroIsolated);
        Assert.InRange(agreement.LastTurnRad, 0.59, 1.01);
        Assert.InRange(agreement.LastTurnMismatchRad, -2.1, -1.1);

        var straight = StreamAgreement.Empty;
        for (int k = 0; k <= 300; k++)
        {
            long t = startUs + (k * 100_000);
            if (k % 10 == 0)
            {
                straight.ObserveVelocity(Measurement.GnssVelocity(t, (ulong)k, 10.0, 1.0, 0.2), options, 0.0);
            }

            straight.ObserveImu(Measurement.Imu(t, (ulong)(1000 + k), -0.1, double.NaN));
        }

        Assert.False(straight.GyroIsolated);
        Assert.True(double.IsNaN(straight.LastTurnRad), "no turn was judged");
    }

    [Fact]
    public void The_course_verdict_is_the_median_of_the_chords_so_one_chord_across_a_position_jump_does_not_isolate_it()
    {
        // Synthetic: due north at 10 m/s (course 0), fixes every second; one fix jumps 40 m east (a multipath step).
        var options = new TrackOptions();
        var agreement = StreamAgreement.Empty;
        const long startUs = 1_700_000_000_000_000;
        const double latDeg = 52.0, lonDeg = 5.0, metresPerDegree = 111_195.0;
        for (int s = 0; s <= 60; s++)
        {
            long t = startUs + (s * 1_000_000L);
            double eastM = s == 20 ? 40.0 : 0.0;
            double lon = lonDeg + (eastM / (metresPerDegree * Math.Cos(Angles.DegreesToRadians(latDeg))));
            agreement.ObserveFix(Measurement.GnssPosition(t, (ulong)s, latDeg + (10.0 * s / metresPerDegree), lon, 3.0), options);
            agreement.ObserveVelocity(Measurement.GnssVelocity(t, (ulong)(100 + s), 10.0, 0.0, 0.2), options, 0.0);
            Assert.False(agreement.CourseIsolated, $"isolated at {s} s");
        }

        Assert.InRange(agreement.CourseOffsetRad, -0.01, 0.01);
    }

    private static ReplayResult Replay(ScenarioRun run, Func<Measurement, Measurement?> alter) =>
        TrackReplay.Run(Processor, TrackState.Empty, run.Measurements.Select(alter).Where(m => m is not null).Select(m => m!.Value));

    private void AssertIsolatedAndClose(ScenarioRun run, ReplayResult faulty, ReplayResult without, SensorKind kind, string stream)
    {
        double rmseFaulty = TruthTally.Smoothed(run, faulty).RmseM, rmseWithout = TruthTally.Smoothed(run, without).RmseM;
        int resets = faulty.Outcomes.Count(o => o.Outcome.Kind == OutcomeKind.TrackReset);
        long firstUs = faulty.Outcomes.Where(o => o.Outcome.Isolated && o.Measurement.Kind == kind).Select(o => o.Measurement.TimeUs).DefaultIfEmpty(long.MaxValue).Min();
        output.WriteLine($"{stream}: isolated {(firstUs - run.Measurements[0].TimeUs) / 1e6:F0} s into the drive; smoothed RMSE {rmseFaulty:F2} m, without the stream {rmseWithout:F2} m; {resets} resets");
        Assert.True(firstUs != long.MaxValue, $"the {stream} was never isolated");
        Assert.True(rmseFaulty <= 1.5 * rmseWithout, $"smoothed RMSE {rmseFaulty:F2} m, without the {stream} {rmseWithout:F2} m");
        Assert.True(resets <= 2, $"{resets} resets");
    }
}
