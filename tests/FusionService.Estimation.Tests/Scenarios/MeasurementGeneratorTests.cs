using FusionService.Estimation.Measurements;
using FusionService.Scenarios;
using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Tests.Scenarios;

public class MeasurementGeneratorTests
{
    private const long T0 = RouteDriverOptions.DefaultStartTimeUs;

    private static TruthTrajectory DeliveryTruth(int stops = 3) =>
        new DeliveryNetwork().PlanRound(0, stops, seed: 99, minDwellS: 30, maxDwellS: 60).Drive();

    private static TruthTrajectory Parked(double durationS) => RouteDriver.Park(10, 20, 0.5, durationS, new RouteDriverOptions());

    private static (double EastM, double NorthM) Error(ScenarioRun run, Measurement m)
    {
        run.Truth.ToLocalM(m.Value0, m.Value1, out double e, out double n);
        TruthSample s = run.Truth.At(m.TimeUs);
        return (e - s.EastM, n - s.NorthM);
    }

    [Fact]
    public void Same_seed_gives_identical_measurements_and_another_seed_does_not()
    {
        TruthTrajectory truth = DeliveryTruth();
        var suite = new SensorSuite
        {
            OutlierProbability = 0.05,
            GnssOutages = [TimeInterval.FromDuration(T0 + 60_000_000, 30)],
            UrbanCanyons = [new UrbanCanyon(TimeInterval.FromDuration(T0 + 120_000_000, 60), 5, -5, 10)],
        };
        ScenarioRun a = MeasurementGenerator.Generate(truth, suite, 42);
        ScenarioRun b = MeasurementGenerator.Generate(truth, suite, 42);
        ScenarioRun c = MeasurementGenerator.Generate(truth, suite, 43);
        Assert.Equal(a.Measurements, b.Measurements);
        Assert.Equal(a.MeasurementTruths, b.MeasurementTruths);
        Assert.NotEqual(a.Measurements, c.Measurements);
    }

    [Fact]
    public void Switching_outliers_on_leaves_every_other_fix_unchanged()
    {
        TruthTrajectory truth = Parked(600);
        ScenarioRun clean = MeasurementGenerator.Generate(truth, new SensorSuite(), 8);
        ScenarioRun dirty = MeasurementGenerator.Generate(truth, new SensorSuite { OutlierProbability = 0.2 }, 8);
        Assert.Equal(clean.Measurements.Count, dirty.Measurements.Count);
        Assert.True(dirty.OutlierCount > 0);
        for (int i = 0; i < clean.Measurements.Count; i++)
        {
            if (!dirty.MeasurementTruths[i].IsOutlier)
            {
                Assert.Equal(clean.Measurements[i], dirty.Measurements[i]);
            }
        }
    }

    [Fact]
    public void Gnss_position_errors_have_the_configured_sigma()
    {
        // Sample variance of n Gaussian errors: (n - 1) s² / σ² ~ chi-square(n - 1) (derived); 99 % interval from
        // MathNet ChiSquared.InvCDF. Mean within the 99 % normal interval. Errors recovered from latitude/longitude.
        const double sigmaM = 3.0;
        TruthTrajectory truth = DeliveryTruth(stops: 5);
        ScenarioRun run = MeasurementGenerator.Generate(truth, new SensorSuite { GnssSigmaM = sigmaM }, 2024);
        var fixes = run.Measurements.Where(m => m.Kind == SensorKind.GnssPosition).ToList();
        Assert.True(fixes.Count > 500, $"{fixes.Count} fixes");
        var errors = fixes.Select(m => Error(run, m)).ToList();
        foreach ((string axis, Func<(double EastM, double NorthM), double> pick) in new (string, Func<(double EastM, double NorthM), double>)[] { ("east", e => e.EastM), ("north", e => e.NorthM) })
        {
            (double mean, double variance, int n) = ScenarioStatistics.MeanAndVariance(errors.Select(pick));
            (double low, double high) = ScenarioStatistics.SampleVarianceInterval(sigmaM, n, 0.99);
            AssertNear.Within(low, high, variance, 0.0, $"{axis} error sample variance (m²)");
            AssertNear.Equal(0.0, mean, ScenarioStatistics.MeanHalfWidth(sigmaM, n, 0.99), $"{axis} error mean (m)");
        }

        for (int i = 0; i < run.Measurements.Count; i++)
        {
            Measurement m = run.Measurements[i];
            if (m.Kind != SensorKind.GnssPosition)
            {
                continue;
            }

            Assert.Equal((float)sigmaM, m.Value2);
            (double e, double nn) = Error(run, m);
            AssertNear.Equal(run.MeasurementTruths[i].ErrorEastM, e, 1e-6, "recorded east error (m)");
            AssertNear.Equal(run.MeasurementTruths[i].ErrorNorthM, nn, 1e-6, "recorded north error (m)");
        }
    }

    [Fact]
    public void Wheel_speed_and_imu_noise_match_configuration()
    {
        // Same chi-square variance interval (derived); the gyro reads yaw rate + bias, the wheel speed x scale.
        TruthTrajectory truth = DeliveryTruth(stops: 4);
        var suite = new SensorSuite { WheelScale = 1.03, GyroBiasRps = 0.5 * Math.PI / 180.0 };
        ScenarioRun run = MeasurementGenerator.Generate(truth, suite, 77);
        var wheel = new List<double>();
        var gyro = new List<double>();
        var accel = new List<double>();
        foreach (Measurement m in run.Measurements)
        {
            TruthSample s = truth.At(m.TimeUs);
            if (m.Kind == SensorKind.WheelSpeed)
            {
                if (s.SpeedMps == 0.0)
                {
                    Assert.Equal(0.0, m.Value0);
                }
                else
                {
                    wheel.Add(m.Value0 - (s.SpeedMps * suite.WheelScale));
                }
            }
            else if (m.Kind == SensorKind.Imu)
            {
                gyro.Add(m.Value0 - s.YawRateRps);
                accel.Add(m.Value1 - s.AccelMps2);
            }
        }

        CheckNoise(wheel, 0.0, suite.WheelSpeedSigmaMps, "wheel speed (m/s)");
        CheckNoise(gyro, suite.GyroBiasRps, suite.GyroSigmaRps, "gyro yaw rate (rad/s)");
        CheckNoise(accel, 0.0, suite.AccelSigmaMps2, "acceleration (m/s²)");
    }

    [Fact]
    public void Outliers_have_the_configured_magnitude_and_frequency()
    {
        // Outlier count ~ Binomial(n, p): 99 % interval from MathNet Binomial.CDF (derived). Each outlier's error is the
        // jump alone, so its length lies in [30, 100] m. An ordinary fix beyond 30 m would need a 10-sigma radius:
        // probability exp(-50) for a circular Gaussian (derived), i.e. never.
        TruthTrajectory truth = Parked(3000);
        var suite = new SensorSuite { OutlierProbability = 0.1, OutlierMinM = 30, OutlierMaxM = 100 };
        ScenarioRun run = MeasurementGenerator.Generate(truth, suite, 5);
        int fixes = 0;
        for (int i = 0; i < run.Measurements.Count; i++)
        {
            Measurement m = run.Measurements[i];
            if (m.Kind != SensorKind.GnssPosition)
            {
                continue;
            }

            fixes++;
            (double e, double n) = Error(run, m);
            double r = Math.Sqrt((e * e) + (n * n));
            if (run.MeasurementTruths[i].IsOutlier)
            {
                AssertNear.Within(suite.OutlierMinM, suite.OutlierMaxM, r, 1e-6, "outlier jump length (m)");
            }
            else
            {
                AssertNear.AtMost(suite.OutlierMinM, r, 0.0, "ordinary fix error (m)");
            }
        }

        (int low, int high) = ScenarioStatistics.BinomialInterval(0.1, fixes, 0.99);
        AssertNear.Within(low, high, run.OutlierCount, 0.0, "outlier count");
        Assert.Equal(run.OutlierCount, run.MeasurementTruths.Count(t => t.IsOutlier && t.Kind == SensorKind.GnssPosition));
    }

    [Fact]
    public void Outages_contain_no_gnss_while_other_sensors_continue()
    {
        TruthTrajectory truth = DeliveryTruth();
        TimeInterval[] outages = [TimeInterval.FromDuration(T0 + 40_000_000, 25), TimeInterval.FromDuration(T0 + 150_000_000, 60)];
        ScenarioRun run = MeasurementGenerator.Generate(truth, new SensorSuite { GnssOutages = outages }, 3);
        foreach (TimeInterval outage in outages)
        {
            var inside = run.Measurements.Where(m => outage.Contains(m.TimeUs)).ToList();
            Assert.DoesNotContain(inside, m => m.Kind is SensorKind.GnssPosition or SensorKind.GnssVelocity);
            Assert.Equal(outage.DurationUs / 100_000, inside.Count(m => m.Kind == SensorKind.WheelSpeed));
            Assert.Equal(outage.DurationUs / 100_000, inside.Count(m => m.Kind == SensorKind.Imu));
            Assert.Contains(run.Measurements, m => m.Kind == SensorKind.GnssPosition && m.TimeUs == outage.StartTimeUs - 1_000_000);
            Assert.Contains(run.Measurements, m => m.Kind == SensorKind.GnssPosition && m.TimeUs == outage.EndTimeUs);
        }
    }

    [Fact]
    public void Urban_canyon_fixes_are_biased_heavy_tailed_and_flagged()
    {
        // Student-t with ν = 3 scaled to per-axis standard deviation σ: P(|e - bias| > 3σ) = 2 (1 - T₃(3 sqrt(3)))
        // (derived; CDF from MathNet StudentT), about 1.4 %, against 0.27 % for a Gaussian. Both counts use the east axis
        // only (the axes share one mixing draw). Mean within the 99 % normal interval (finite variance for ν > 2).
        const double sigmaM = 12.0;
        TruthTrajectory truth = Parked(1100);
        var canyon = new UrbanCanyon(TimeInterval.FromDuration(T0 + 50_000_000, 1000), 15.0, -10.0, sigmaM, 3.0, ReportedSigmaM: 5.0);
        var suite = new SensorSuite { UrbanCanyons = [canyon], GnssPositionPeriodUs = 200_000, GnssVelocityEnabled = false, WheelSpeedEnabled = false, ImuEnabled = false };
        ScenarioRun run = MeasurementGenerator.Generate(truth, suite, 11);
        var east = new List<double>();
        var north = new List<double>();
        for (int i = 0; i < run.Measurements.Count; i++)
        {
            Measurement m = run.Measurements[i];
            bool inside = canyon.Span.Contains(m.TimeUs);
            Assert.Equal(inside, run.MeasurementTruths[i].InUrbanCanyon);
            Assert.Equal(inside ? 5.0f : 3.0f, m.Value2);
            if (inside)
            {
                (double e, double n) = Error(run, m);
                east.Add(e);
                north.Add(n);
            }
        }

        Assert.Equal(5000, east.Count);
        AssertNear.Equal(15.0, east.Average(), ScenarioStatistics.MeanHalfWidth(sigmaM, east.Count, 0.99), "canyon east bias (m)");
        AssertNear.Equal(-10.0, north.Average(), ScenarioStatistics.MeanHalfWidth(sigmaM, north.Count, 0.99), "canyon north bias (m)");
        int beyond = east.Count(e => Math.Abs(e - 15.0) > 3.0 * sigmaM);
        double pT = 2.0 * (1.0 - StudentT.CDF(0.0, 1.0, 3.0, 3.0 * Math.Sqrt(3.0)));
        (int low, int high) = ScenarioStatistics.BinomialInterval(pT, east.Count, 0.99);
        AssertNear.Within(low, high, beyond, 0.0, "canyon fixes beyond 3 sigma (Student-t expectation)");
        (_, int gaussianHigh) = ScenarioStatistics.BinomialInterval(2.0 * (1.0 - Normal.CDF(0, 1, 3.0)), east.Count, 0.99);
        Assert.True(beyond > gaussianHigh, $"{beyond} beyond 3 sigma is not heavier-tailed than a Gaussian (upper {gaussianHigh})");
    }

    [Fact]
    public void Gnss_velocity_has_no_course_at_low_speed_and_the_configured_speed_noise()
    {
        // Speed noise pooled over ten seeds (about 4700 fixes above 3 m/s); a single seed (21) put the mean at z = -2.68,
        // outside its 99 % interval, which a 3000-seed probe showed happens for 0.8 % of seeds, as a 99 % check should.
        TruthTrajectory truth = DeliveryTruth(stops: 4);
        var suite = new SensorSuite { WheelSpeedEnabled = false, ImuEnabled = false };
        var speedErrors = new List<double>();
        int stopped = 0;
        IEnumerable<Measurement> velocities = Enumerable.Range(21, 10)
            .SelectMany(seed => MeasurementGenerator.Generate(truth, suite, seed).Measurements)
            .Where(m => m.Kind == SensorKind.GnssVelocity);
        foreach (Measurement m in velocities)
        {
            TruthSample s = truth.At(m.TimeUs);
            Assert.Equal(m.Value0 < suite.CourseMinSpeedMps, double.IsNaN(m.Value1));
            Assert.True(m.Value0 >= 0);
            if (s.SpeedMps == 0.0)
            {
                stopped++;
                Assert.True(double.IsNaN(m.Value1));
            }
            else if (s.SpeedMps > 3.0)
            {
                speedErrors.Add(m.Value0 - s.SpeedMps);
                double courseRad = (Math.PI / 2.0) - s.HeadingRad;
                double diff = Math.IEEERemainder(m.Value1 - courseRad, 2.0 * Math.PI);
                AssertNear.AtMost(5.0 * suite.GnssSpeedSigmaMps / 3.0, Math.Abs(diff), 0.0, "course error within 5 sigma at > 3 m/s (rad)");
            }
        }

        Assert.True(stopped > 600, $"{stopped} velocity fixes while stopped");
        CheckNoise(speedErrors, 0.0, suite.GnssSpeedSigmaMps, "GNSS speed (m/s)");
    }

    [Fact]
    public void Measurements_are_in_canonical_order_with_unique_keys_and_lookup_by_key()
    {
        ScenarioRun run = MeasurementGenerator.Generate(DeliveryTruth(stops: 2), new SensorSuite { OutlierProbability = 0.1 }, 1);
        for (int i = 1; i < run.Measurements.Count; i++)
        {
            Assert.True(MeasurementGenerator.CompareCanonical(run.Measurements[i - 1], run.Measurements[i]) < 0);
        }

        Assert.Equal(run.Measurements.Count, run.Measurements.Select(m => m.MessageKey).Distinct().Count());
        for (int i = 0; i < run.Measurements.Count; i += 37)
        {
            Measurement m = run.Measurements[i];
            Assert.True(run.TryGetIndex(m.MessageKey, out int index));
            Assert.Equal(i, index);
            MeasurementTruth t = run.GetMeasurementTruth(m.MessageKey);
            Assert.Equal((m.MessageKey, m.Kind, m.TimeUs), (t.MessageKey, t.Kind, t.TimeUs));
        }

        Assert.False(run.TryGetIndex(ulong.MaxValue, out int missing));
        Assert.Equal(-1, missing);
    }

    [Fact]
    public void Model_consistent_truth_supplies_the_sensor_errors()
    {
        TruthTrajectory truth = ModelConsistentTruth.Generate(new ModelConsistentTruthOptions { InitialGyroBiasRps = 0.02, InitialWheelScale = 0.95 }, 9);
        ScenarioRun run = MeasurementGenerator.Generate(truth, new SensorSuite { GyroBiasRps = 0, WheelScale = 1 }, 9);
        foreach (MeasurementTruth t in run.MeasurementTruths)
        {
            TruthSample s = truth.At(t.TimeUs);
            SensorErrorSample e = truth.SensorErrorsAt(t.TimeUs)!.Value;
            if (t.Kind == SensorKind.Imu)
            {
                AssertNear.Equal(s.YawRateRps + e.GyroBiasRps, t.NoiseFreeValue0, 1e-15, "noise-free gyro reading (rad/s)");
            }
            else if (t.Kind == SensorKind.WheelSpeed)
            {
                AssertNear.Equal(s.SpeedMps * e.WheelScale, t.NoiseFreeValue0, 1e-12, "noise-free wheel reading (m/s)");
            }
        }

        var state = run.TrueStateAt(truth.EndTimeUs);
        Assert.Equal(truth.SensorErrors![^1].GyroBiasRps, state[6]);
        Assert.Equal(truth.SensorErrors![^1].WheelScale, state[7]);
        // The bias random walk spreads by sqrt(q T) = sqrt(1e-9 x 10) = 1e-4 rad/s over the run (derived): 5 sigma.
        AssertNear.Equal(0.02, truth.SensorErrors![^1].GyroBiasRps, 5e-4, "gyro bias after 10 s (rad/s)");
    }

    private static void CheckNoise(List<double> errors, double expectedMean, double sigma, string quantity)
    {
        (double mean, double variance, int n) = ScenarioStatistics.MeanAndVariance(errors);
        Assert.True(n > 300, $"{quantity}: only {n} samples");
        (double low, double high) = ScenarioStatistics.SampleVarianceInterval(sigma, n, 0.99);
        AssertNear.Within(low, high, variance, 0.0, $"{quantity} sample variance");
        AssertNear.Equal(expectedMean, mean, ScenarioStatistics.MeanHalfWidth(sigma, n, 0.99), $"{quantity} mean");
    }
}
