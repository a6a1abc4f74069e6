using FusionService.Estimation.Geodesy;
using FusionService.Scenarios;

namespace FusionService.Estimation.Tests.Scenarios;

public class RouteDriverTests
{
    private static readonly RouteDriverOptions Options = new();

    public static TheoryData<int> Vans => new() { 0, 1, 2 };

    private static (DeliveryRound Round, TruthTrajectory Truth) Round(int van)
    {
        DeliveryRound round = new DeliveryNetwork().PlanRound(van, stopCount: 4, seed: 20260101, minDwellS: 30, maxDwellS: 90);
        return (round, round.Drive(Options));
    }

    [Theory]
    [MemberData(nameof(Vans))]
    public void Truth_respects_acceleration_lateral_and_yaw_rate_limits(int van)
    {
        // Limits are the configured delivery-van values (check values section 8, from memory); the check is derived:
        // reported values and finite differences between samples must both stay within them.
        (_, TruthTrajectory truth) = Round(van);
        IReadOnlyList<TruthSample> s = truth.Samples;
        double dtS = truth.SamplePeriodUs / 1e6;
        double maxYaw = 0;
        for (int i = 0; i < s.Count; i++)
        {
            TruthSample x = s[i];
            AssertNear.Within(-Options.BrakeMaxMps2, Options.AccelMaxMps2, x.AccelMps2, 1e-9, "acceleration (m/s²)");
            AssertNear.AtMost(Options.MaxYawRateRps, Math.Abs(x.YawRateRps), 1e-12, "|yaw rate| (rad/s)");
            AssertNear.AtMost(Options.MaxLateralAccelMps2, Math.Abs(x.SpeedMps * x.YawRateRps), 1e-9, "|lateral acceleration| (m/s²)");
            AssertNear.Within(0.0, Options.CruiseSpeedMaxMps, x.SpeedMps, 1e-9, "speed (m/s)");
            Assert.InRange(x.HeadingRad, -Math.PI, Math.PI);
            Assert.True(x.HeadingRad > -Math.PI);
            maxYaw = Math.Max(maxYaw, Math.Abs(x.YawRateRps));
            if (i == 0)
            {
                continue;
            }

            TruthSample p = s[i - 1];
            AssertNear.Within(-Options.BrakeMaxMps2, Options.AccelMaxMps2, (x.SpeedMps - p.SpeedMps) / dtS, 1e-6, "finite-difference acceleration (m/s²)");
            AssertNear.AtMost(Options.MaxYawRateRps, Math.Abs(Angles.WrapPi(x.HeadingRad - p.HeadingRad)) / dtS, 1e-6, "finite-difference yaw rate (rad/s)");
            double stepM = Math.Sqrt(((x.EastM - p.EastM) * (x.EastM - p.EastM)) + ((x.NorthM - p.NorthM) * (x.NorthM - p.NorthM)));
            AssertNear.Equal(0.5 * (x.SpeedMps + p.SpeedMps) * dtS, stepM, 1e-3, "distance between samples vs mean speed x dt (m)");
            if (stepM > 1e-3)
            {
                double chordRad = Math.Atan2(x.NorthM - p.NorthM, x.EastM - p.EastM);
                AssertNear.AtMost(Options.MaxYawRateRps * dtS, Math.Abs(Angles.WrapPi(chordRad - p.HeadingRad)), 1e-6, "chord direction vs heading (rad)");
            }
        }

        // With 10 m corners the yaw-rate limit binds before the lateral one (ω r = 5.24 m/s < sqrt(0.4 g r) = 6.26 m/s; derived),
        // so every 90-degree corner reaches it.
        AssertNear.AtMost(maxYaw, Options.MaxYawRateRps, 1e-9, "largest |yaw rate| reaches the limit (rad/s)");
    }

    [Theory]
    [MemberData(nameof(Vans))]
    public void Van_is_exactly_still_during_each_stop_for_its_dwell_time(int van)
    {
        (DeliveryRound round, TruthTrajectory truth) = Round(van);
        Assert.Equal(round.Stops.Count, truth.StopIntervals.Count);
        for (int k = 0; k < round.Stops.Count; k++)
        {
            TimeInterval stop = truth.StopIntervals[k];
            AssertNear.Equal(round.Stops[k].DwellS * 1e6, stop.DurationUs, 2.0, "stop duration (us)");
            int inside = 0;
            foreach (TruthSample x in truth.Samples)
            {
                if (!stop.Contains(x.TimeUs))
                {
                    continue;
                }

                inside++;
                Assert.Equal(0.0, x.SpeedMps);
                Assert.Equal(0.0, x.YawRateRps);
                Assert.Equal(0.0, x.AccelMps2);
                AssertNear.Equal(round.Stops[k].EastM, x.EastM, 1e-3, "stopped east (m)");
                AssertNear.Equal(round.Stops[k].NorthM, x.NorthM, 1e-3, "stopped north (m)");
            }

            AssertNear.Equal(stop.DurationUs / (double)truth.SamplePeriodUs, inside, 1.0, "samples inside the stop");
        }

        AssertNear.Equal(0.0, truth.Samples[0].EastM, 1e-3, "start east (m)");
        AssertNear.Equal(0.0, truth.Samples[^1].EastM, 1e-3, "end east (m)");
        AssertNear.Equal(0.0, truth.Samples[^1].NorthM, 1e-3, "end north (m)");
        Assert.Equal(0.0, truth.Samples[^1].SpeedMps);
    }

    [Fact]
    public void Straight_leg_follows_the_closed_form_trapezoidal_profile()
    {
        // Fixed cruise 10 m/s, accel 2 m/s², braking 2.5 m/s², 500 m: accelerate 5 s over 25 m, cruise 455 m in 45.5 s,
        // brake 4 s over 20 m; total 54.5 s (derived from v² = 2 a s).
        var options = new RouteDriverOptions
        {
            CruiseSpeedMinMps = 10, CruiseSpeedMaxMps = 10, AccelMinMps2 = 2, AccelMaxMps2 = 2, BrakeMinMps2 = 2.5, BrakeMaxMps2 = 2.5,
        };
        TruthTrajectory t = RouteDriver.Drive([new RouteWaypoint(0, 0), new RouteWaypoint(500, 0)], options, seed: 1);
        long t0 = t.StartTimeUs;
        (double TimeS, double EastM, double SpeedMps)[] expected =
        [
            (2.0, 4.0, 4.0), (5.0, 25.0, 10.0), (30.0, 275.0, 10.0), (52.5, 495.0, 5.0), (54.5, 500.0, 0.0),
        ];
        foreach ((double timeS, double eastM, double speedMps) in expected)
        {
            TruthSample x = t.At(t0 + (long)Math.Round(timeS * 1e6));
            AssertNear.Equal(eastM, x.EastM, 1e-6, $"east at {timeS} s (m)");
            AssertNear.Equal(speedMps, x.SpeedMps, 1e-6, $"speed at {timeS} s (m/s)");
            AssertNear.Equal(0.0, x.NorthM, 1e-9, "north (m)");
        }

        AssertNear.Equal(54.5e6, t.EndTimeUs - t0, 0.0, "trajectory length (us)");
    }

    [Fact]
    public void Same_seed_gives_identical_truth_and_another_seed_does_not()
    {
        DeliveryRound round = new DeliveryNetwork().PlanRound(0, 3, seed: 7);
        TruthTrajectory a = RouteDriver.Drive(round.Waypoints, Options, seed: 11);
        TruthTrajectory b = RouteDriver.Drive(round.Waypoints, Options, seed: 11);
        TruthTrajectory c = RouteDriver.Drive(round.Waypoints, Options, seed: 12);
        Assert.Equal(a.Samples, b.Samples);
        Assert.NotEqual(a.Samples, c.Samples);
    }

    [Fact]
    public void Parked_mode_is_still_throughout()
    {
        TruthTrajectory t = RouteDriver.Park(12.5, -3.0, 4.0, 60.0, Options);
        Assert.Equal(6001, t.Samples.Count);
        Assert.All(t.Samples, x =>
        {
            Assert.Equal(0.0, x.SpeedMps);
            Assert.Equal(0.0, x.YawRateRps);
            Assert.Equal(12.5, x.EastM);
        });
        AssertNear.Equal(Angles.WrapPi(4.0), t.Samples[0].HeadingRad, 1e-15, "heading wrapped to (-pi, pi] (rad)");
        Assert.True(t.StopIntervals.Single().Contains(t.EndTimeUs));
    }

    [Fact]
    public void U_turn_is_rejected()
    {
        Assert.Throws<ArgumentException>(() =>
            RouteDriver.Drive([new RouteWaypoint(0, 0), new RouteWaypoint(100, 0), new RouteWaypoint(0, 0)], Options, 1));
    }
}
