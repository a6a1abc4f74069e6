using FusionService.Estimation.Measurements;
using FusionService.Scenarios;
using FusionService.Simulator.Fleet;

namespace FusionService.Simulator.Tests.Fleet;

/// <summary>
/// Every fault that <see cref="DemoFleet.Faults"/> documents is present in the generated data. The expected values are
/// the fleet's own invented demo settings; the checks compare the measurements with the truth they came from.
/// </summary>
[Collection(FleetCollection.Name)]
public sealed class DemoFleetFaultTests(FleetFixture fixture)
{
    private const double DegPerRad = 180.0 / Math.PI;
    private readonly DemoFleet _fleet = fixture.Fleet;

    [Fact]
    public void Default_fleet_has_twelve_vans_with_plain_ids()
    {
        Assert.Equal(12, _fleet.Vans.Count);
        Assert.Equal(Enumerable.Range(1, 12).Select(i => $"van-{i:00}"), _fleet.Vans.Select(v => v.Id));
        Assert.Equal("Brackenholt", DemoFleet.TownName);
    }

    [Theory]
    [InlineData(7)]
    [InlineData(21)]
    public void Van_count_outside_8_to_20_is_rejected(int count) =>
        Assert.Throws<ArgumentException>(() => new DemoFleetOptions { VanCount = count }.Validate());

    [Fact]
    public void Faults_list_every_kind_once_and_names_the_affected_van()
    {
        DemoFaultKind[] expected =
            [DemoFaultKind.UrbanCanyon, DemoFaultKind.Underpass, DemoFaultKind.WheelSizeError, DemoFaultKind.GyroBias, DemoFaultKind.GnssJumps, DemoFaultKind.TowedAway];
        Assert.Equal(expected, _fleet.Faults.Select(f => f.Kind));
        foreach (DemoFault fault in _fleet.Faults)
        {
            Assert.False(string.IsNullOrWhiteSpace(fault.Description));
            if (fault.VehicleId is null)
            {
                continue;
            }

            DemoVan van = Assert.Single(_fleet.Vans, v => v.Id == fault.VehicleId);
            Assert.Equal(fault.Kind, van.Fault);
        }

        Assert.Equal(4, _fleet.Vans.Count(v => v.Fault != DemoFaultKind.None));
    }

    [Fact]
    public void Rounds_have_stops_of_a_few_minutes()
    {
        foreach (DemoVan van in _fleet.Vans)
        {
            Assert.Equal(8, van.Round.Stops.Count);
            foreach (DeliveryStop stop in van.Round.Stops)
            {
                AssertNear.Within(120.0, 300.0, stop.DwellS, 0.0, $"{van.Id} dwell (s)");
            }
        }
    }

    [Fact]
    public void Wheel_size_van_reads_1_03_times_the_true_speed_and_the_others_0_5_to_1_percent_high()
    {
        foreach (DemoVan van in _fleet.Vans)
        {
            // Least-squares scale sum(w v) / sum(v^2) over moving samples (derived: the generator reads v x scale + noise).
            double wv = 0, vv = 0;
            foreach (Measurement m in van.Measurements.Where(m => m.Kind == SensorKind.WheelSpeed && (van.TowSpan is null || m.TimeUs < van.TowSpan.Value.StartTimeUs)))
            {
                double v = van.Truth.At(m.TimeUs).SpeedMps;
                if (v > 2.0)
                {
                    wv += m.Value0 * v;
                    vv += v * v;
                }
            }

            double scale = wv / vv;
            // Tolerance 1e-3: the 0.05 m/s wheel noise over thousands of samples at ~10 m/s leaves ~1e-4 of scatter.
            if (van.Fault == DemoFaultKind.WheelSizeError)
            {
                AssertNear.Equal(1.03, scale, 1e-3, $"{van.Id} wheel/truth speed ratio");
            }
            else
            {
                AssertNear.Within(1.005, 1.010, scale, 1e-3, $"{van.Id} wheel/truth speed ratio");
            }
        }
    }

    [Fact]
    public void Gyro_bias_van_reads_3_deg_per_s_above_the_true_yaw_rate_and_the_others_within_half_a_degree()
    {
        foreach (DemoVan van in _fleet.Vans)
        {
            double[] differencesDps = [.. van.Measurements
                .Where(m => m.Kind == SensorKind.Imu && (van.TowSpan is null || m.TimeUs < van.TowSpan.Value.StartTimeUs))
                .Select(m => (m.Value0 - van.Truth.At(m.TimeUs).YawRateRps) * DegPerRad)];
            double meanDps = differencesDps.Average();
            // Tolerance 0.01 deg/s: 0.005 rad/s (0.29 deg/s) gyro noise averaged over > 10 000 samples.
            if (van.Fault == DemoFaultKind.GyroBias)
            {
                AssertNear.Equal(3.0, meanDps, 0.01, $"{van.Id} mean gyro - true yaw rate (deg/s)");
            }
            else
            {
                AssertNear.Within(-0.5, 0.5, meanDps, 0.01, $"{van.Id} mean gyro - true yaw rate (deg/s)");
            }
        }
    }

    [Fact]
    public void Jumping_van_has_a_few_percent_of_fixes_30_to_100_m_off_and_no_other_van_has_any()
    {
        foreach (DemoVan van in _fleet.Vans)
        {
            List<double> errorsM = OpenSkyErrorsM(van);
            int jumps = errorsM.Count(e => e >= 30.0);
            if (van.Fault == DemoFaultKind.GnssJumps)
            {
                Assert.True(errorsM.Count > 1000, $"{van.Id} has only {errorsM.Count} open-sky fixes");
                foreach (double e in errorsM.Where(e => e >= 30.0))
                {
                    AssertNear.Within(30.0, 100.0, e, 0.01, $"{van.Id} jump length (m)");
                }

                // 4 % of ~2000 fixes: binomial sd ~0.45 %; [2 %, 6 %] is more than 4 sd either side.
                AssertNear.Within(0.02, 0.06, (double)jumps / errorsM.Count, 0.0, $"{van.Id} share of jumps");
            }
            else
            {
                Assert.True(jumps == 0, $"{van.Id} has {jumps} fixes 30 m or more off in open sky");
            }
        }
    }

    [Fact]
    public void Underpass_spans_have_no_gnss_and_lie_in_the_underpass()
    {
        int vansWithOutage = 0;
        foreach (DemoVan van in _fleet.Vans)
        {
            if (van.OutageSpans.Count > 0)
            {
                vansWithOutage++;
            }

            foreach (TimeInterval span in van.OutageSpans)
            {
                Assert.True(span.DurationUs >= 2_000_000, $"{van.Id} outage {span} shorter than 2 s");
                Assert.DoesNotContain(van.Measurements, m => m.Kind is SensorKind.GnssPosition or SensorKind.GnssVelocity && span.Contains(m.TimeUs));
                TruthSample middle = van.Truth.At(span.StartTimeUs + (span.DurationUs / 2));
                Assert.True(_fleet.UnderpassZone.Contains(middle.EastM, middle.NorthM), $"{van.Id} outage {span} is not in the underpass");
                // GNSS resumes: a fix within 1 s after the span ends (1 Hz GNSS).
                Assert.Contains(van.Measurements, m => m.Kind == SensorKind.GnssPosition && m.TimeUs >= span.EndTimeUs && m.TimeUs < span.EndTimeUs + 1_000_000);
            }
        }

        Assert.True(vansWithOutage >= 2, $"only {vansWithOutage} vans pass the underpass");
    }

    [Fact]
    public void Canyon_fixes_are_biased_and_under_reported()
    {
        var east = new List<double>();
        var north = new List<double>();
        foreach (DemoVan van in _fleet.Vans)
        {
            foreach (Measurement m in van.Measurements.Where(m => m.Kind == SensorKind.GnssPosition && InAny(van.CanyonSpans, m.TimeUs)))
            {
                (double e, double n) = ErrorM(van, m);
                if (Math.Sqrt((e * e) + (n * n)) >= 30.0 && van.Fault == DemoFaultKind.GnssJumps)
                {
                    continue;
                }

                east.Add(e);
                north.Add(n);
                AssertNear.Equal(4.0, m.Value2, 1e-6, $"{van.Id} reported canyon accuracy (m)");
            }
        }

        Assert.True(east.Count >= 200, $"only {east.Count} canyon fixes");
        // Mean of Student-t (3 dof, 10 m per axis) errors: sd 10 / sqrt(n) <= 0.71 m for n >= 200; 3 m is over 4 sd.
        AssertNear.Equal(6.0, east.Average(), 3.0, "mean canyon east error (m)");
        AssertNear.Equal(-8.0, north.Average(), 3.0, "mean canyon north error (m)");
        double rms = Math.Sqrt(east.Select(x => Sq(x - 6.0)).Concat(north.Select(y => Sq(y + 8.0))).Average());
        Assert.True(rms > 2.0 * 4.0, $"canyon scatter {rms} m is not wider than the reported 4 m");
    }

    [Fact]
    public void Tow_van_moves_2_5_km_while_its_wheel_reads_0_and_its_imu_is_quiet()
    {
        DemoVan van = Assert.Single(_fleet.Vans, v => v.Fault == DemoFaultKind.TowedAway);
        TimeInterval tow = Assert.NotNull(van.TowSpan);
        Assert.True(tow.DurationUs > 120_000_000, $"tow lasts only {tow.DurationUs / 1e6} s");

        // Truth: set down 2 500 m from the lift point (the fleet's invented tow length; RouteDriver ends at the waypoint).
        TruthSample lift = van.Truth.At(tow.StartTimeUs);
        TruthSample drop = van.Truth.At(tow.EndTimeUs);
        AssertNear.Equal(2500.0, Math.Sqrt(Sq(drop.EastM - lift.EastM) + Sq(drop.NorthM - lift.NorthM)), 1.0, "true tow distance (m)");

        // GNSS continues: every second of the tow has a fix, and the fixes move the same 2.5 km.
        long[] fixTimes = [.. van.Measurements.Where(m => m.Kind == SensorKind.GnssPosition && tow.Contains(m.TimeUs)).Select(m => m.TimeUs)];
        Assert.True(fixTimes.Length >= (tow.DurationUs / 1_000_000) - 1, $"{fixTimes.Length} fixes in a {tow.DurationUs / 1e6} s tow");
        Assert.All(fixTimes.Zip(fixTimes.Skip(1)), p => Assert.Equal(1_000_000, p.Second - p.First));
        (double e0, double n0) = MeanFixM(van, tow.StartTimeUs - 20_000_000, tow.StartTimeUs);
        (double e1, double n1) = MeanFixM(van, tow.EndTimeUs, tow.EndTimeUs + 60_000_000);
        // 20-60 averaged fixes with 3 m noise: well within 10 m.
        AssertNear.Equal(2500.0, Math.Sqrt(Sq(e1 - e0) + Sq(n1 - n0)), 10.0, "measured tow distance (m)");

        // Wheel exactly 0 from the lift to the end; IMU shows only the van's bias and noise (< 5 sigma).
        var after = van.Measurements.Where(m => m.TimeUs > tow.StartTimeUs).ToList();
        Assert.All(after.Where(m => m.Kind == SensorKind.WheelSpeed), m => Assert.Equal(0.0, m.Value0));
        Assert.True(after.Count(m => m.Kind == SensorKind.WheelSpeed) > 1000);
        foreach (Measurement m in after.Where(m => m.Kind == SensorKind.Imu))
        {
            AssertNear.Equal(van.Suite.GyroBiasRps, m.Value0, 5 * van.Suite.GyroSigmaRps, "quiet gyro (rad/s)");
            AssertNear.Equal(0.0, m.Value1, 5 * van.Suite.AccelSigmaMps2, "quiet accelerometer (m/s^2)");
        }

        // Before the lift the wheel really turns.
        Assert.Contains(van.Measurements, m => m.Kind == SensorKind.WheelSpeed && m.TimeUs < tow.StartTimeUs && m.Value0 > 5.0);
        Assert.Equal(van.Measurements.Count, van.Measurements.Select(m => m.MessageKey).Distinct().Count());
    }

    private static double Sq(double x) => x * x;

    private static bool InAny(IEnumerable<TimeInterval> spans, long timeUs) => spans.Any(s => s.Contains(timeUs));

    private static (double EastM, double NorthM) ErrorM(DemoVan van, Measurement fix)
    {
        van.Truth.ToLocalM(fix.Value0, fix.Value1, out double e, out double n);
        TruthSample s = van.Truth.At(fix.TimeUs);
        return (e - s.EastM, n - s.NorthM);
    }

    private static List<double> OpenSkyErrorsM(DemoVan van) =>
        [.. van.Measurements
            .Where(m => m.Kind == SensorKind.GnssPosition && !InAny(van.CanyonSpans, m.TimeUs))
            .Select(m => ErrorM(van, m))
            .Select(e => Math.Sqrt(Sq(e.EastM) + Sq(e.NorthM)))];

    private static (double EastM, double NorthM) MeanFixM(DemoVan van, long fromUs, long toUs)
    {
        var points = van.Measurements.Where(m => m.Kind == SensorKind.GnssPosition && m.TimeUs >= fromUs && m.TimeUs < toUs).Select(m =>
        {
            van.Truth.ToLocalM(m.Value0, m.Value1, out double e, out double n);
            return (e, n);
        }).ToList();
        Assert.True(points.Count >= 10, $"only {points.Count} fixes in [{fromUs}, {toUs})");
        return (points.Average(p => p.e), points.Average(p => p.n));
    }
}
