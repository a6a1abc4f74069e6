using FusionService.Estimation.Measurements;
using FusionService.Scenarios;
using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Tests.Scenarios;

/// <summary>Issue 12: multipath episodes, carried spans, HDOP-only accuracy and course rounding of <see cref="MeasurementGenerator"/>.</summary>
public class MultipathAndCarriedTests
{
    private const long T0 = RouteDriverOptions.DefaultStartTimeUs;

    [Fact]
    public void Random_multipath_episodes_have_the_configured_sizes_durations_and_rate()
    {
        // 100 h of episodes. Each lies in its ranges and they do not overlap. Count in time t of an alternating renewal
        // process with cycle mean mu and variance s^2: mean t / mu, variance t s^2 / mu^3 (renewal central limit
        // theorem, Cox 1962, from memory); cycle = uniform duration [5, 40) s (variance 35^2 / 12) + exponential gap
        // of mean 45 s (variance 45^2). Tolerance 3.29 standard deviations (99.9 %, MathNet Normal.InvCDF).
        var process = new MultipathProcess { MeanGapS = 45, DurationMinS = 5, DurationMaxS = 40, BiasMinM = 15, BiasMaxM = 60 };
        TruthTrajectory truth = RouteDriver.Park(0, 0, 0, 100 * 3600.0, new RouteDriverOptions { SamplePeriodUs = 1_000_000 });
        IReadOnlyList<MultipathEpisode> episodes = MeasurementGenerator.MultipathEpisodesOf(truth, new SensorSuite { GnssRandomMultipath = process }, 9);
        for (int i = 0; i < episodes.Count; i++)
        {
            MultipathEpisode e = episodes[i];
            AssertNear.Within(5.0, 40.0, e.Span.DurationUs / 1e6, 1e-6, "episode duration (s)");
            AssertNear.Within(15.0, 60.0, e.BiasM, 1e-9, "episode bias (m)");
            Assert.True(i == 0 || e.Span.StartTimeUs >= episodes[i - 1].Span.EndTimeUs, "episodes do not overlap");
        }

        double t = 100 * 3600.0, mu = 22.5 + 45.0, s2 = (35.0 * 35.0 / 12.0) + (45.0 * 45.0);
        double sd = Math.Sqrt(t * s2 / (mu * mu * mu));
        AssertNear.Equal(t / mu, episodes.Count, Normal.InvCDF(0, 1, 0.9995) * sd, "episode count (1)");
        AssertNear.Equal(1.0 / 3.0, process.ExpectedTimeFraction, 1e-12, "expected time fraction (1)");
    }

    [Fact]
    public void Multipath_adds_its_bias_to_fixes_only_and_reports_a_mildly_larger_sigma()
    {
        // Against the same seed without multipath: fixes inside an episode carry exactly its bias more, all other
        // measurements (velocity, wheel, IMU, fixes outside) are bit for bit the same; reported sigma x 1.5 inside.
        TruthTrajectory truth = new DeliveryNetwork().PlanRound(0, 3, seed: 5, minDwellS: 20, maxDwellS: 40).Drive();
        var explicitEpisode = new MultipathEpisode(TimeInterval.FromDuration(T0 + 30_000_000, 12), 20, -25);
        var baseSuite = new SensorSuite { GnssCorrelatedVarianceFraction = 0.5, OutlierProbability = 0.02 };
        var suite = baseSuite with { GnssMultipathEpisodes = [explicitEpisode], GnssRandomMultipath = new MultipathProcess() };
        ScenarioRun clean = MeasurementGenerator.Generate(truth, baseSuite, 31);
        ScenarioRun dirty = MeasurementGenerator.Generate(truth, suite, 31);
        IReadOnlyList<MultipathEpisode> episodes = MeasurementGenerator.MultipathEpisodesOf(truth, suite, 31);
        Assert.Equal(explicitEpisode, episodes.First(e => e.Span.Contains(T0 + 35_000_000)));
        Assert.Equal(clean.Measurements.Count, dirty.Measurements.Count);
        int biased = 0;
        for (int i = 0; i < clean.Measurements.Count; i++)
        {
            Measurement a = clean.Measurements[i], b = dirty.Measurements[i];
            MeasurementTruth tb = dirty.MeasurementTruths[i];
            MultipathEpisode? episode = episodes.Where(e => e.Span.Contains(b.TimeUs)).Select(e => (MultipathEpisode?)e).FirstOrDefault();
            Assert.Equal(episode is not null, tb.InMultipath);
            if (b.Kind != SensorKind.GnssPosition || episode is null || tb.IsOutlier)
            {
                Assert.Equal(a, b);
                continue;
            }

            biased++;
            MeasurementTruth ta = clean.MeasurementTruths[i];
            AssertNear.Equal(episode.Value.BiasEastM, tb.ErrorEastM - ta.ErrorEastM, 1e-9, "east bias (m)");
            AssertNear.Equal(episode.Value.BiasNorthM, tb.ErrorNorthM - ta.ErrorNorthM, 1e-9, "north bias (m)");
            Assert.Equal((float)(1.5 * baseSuite.GnssSigmaM), b.Value2);
        }

        Assert.True(biased > 100, $"{biased} biased fixes");
    }

    [Fact]
    public void Tow_preset_reads_wheel_zero_and_gyro_bias_while_gnss_shows_the_carried_motion()
    {
        // Truth moves 2500 m in the carried span; wheel exactly 0 there; the gyro reads bias + noise (mean within the 99.9 %
        // normal interval of the mean, MathNet); GNSS speed in the cruise equals the true 4 m/s within 4 sigma per fix
        // (sigma 0.1 m/s; 4 sigma exceeded with probability 6e-5 per fix, derived), and the mean over the cruise within 0.05 m/s.
        RealisticDrive tow = RealisticDrives.Tow();
        ScenarioRun run = tow.Generate();
        TimeInterval span = Assert.Single(tow.Suite.CarriedSpans);
        TruthSample start = tow.Truth.At(span.StartTimeUs), end = tow.Truth.At(span.EndTimeUs - tow.Truth.SamplePeriodUs);
        AssertNear.Equal(2500.0, Math.Sqrt(Math.Pow(end.EastM - start.EastM, 2) + Math.Pow(end.NorthM - start.NorthM, 2)), 1e-3, "carried distance (m)");
        var gyro = new List<double>();
        var cruiseSpeeds = new List<double>();
        int wheels = 0;
        for (int i = 0; i < run.Measurements.Count; i++)
        {
            Measurement m = run.Measurements[i];
            MeasurementTruth t = run.MeasurementTruths[i];
            Assert.Equal(span.Contains(m.TimeUs), t.IsCarried);
            if (!t.IsCarried)
            {
                continue;
            }

            TruthSample s = tow.Truth.At(m.TimeUs);
            switch (m.Kind)
            {
                case SensorKind.WheelSpeed:
                    Assert.Equal(0.0, m.Value0);
                    wheels++;
                    break;
                case SensorKind.Imu:
                    gyro.Add(m.Value0);
                    break;
                case SensorKind.GnssVelocity when s.SpeedMps == 4.0:
                    AssertNear.Equal(4.0, m.Value0, 4 * tow.Suite.GnssSpeedSigmaMps, "carried GNSS speed (m/s)");
                    cruiseSpeeds.Add(m.Value0);
                    break;
            }
        }

        Assert.True(wheels > 6000, $"{wheels} wheel samples while carried");
        Assert.True(cruiseSpeeds.Count > 600, $"{cruiseSpeeds.Count} GNSS speeds in the cruise");
        AssertNear.Equal(4.0, cruiseSpeeds.Average(), 0.05, "mean carried GNSS speed (m/s)");
        AssertNear.Equal(tow.Suite.GyroBiasRps, gyro.Average(), ScenarioStatistics.MeanHalfWidth(tow.Suite.GyroSigmaRps, gyro.Count, 0.999), "carried gyro mean (rad/s)");
    }

    [Fact]
    public void Park_preset_stands_three_hours_with_wheel_zero_and_repeated_multipath()
    {
        RealisticDrive park = RealisticDrives.ParkBesideBuilding();
        ScenarioRun run = park.Generate();
        AssertNear.Equal(3 * 3600.0, (park.Truth.EndTimeUs - park.Truth.StartTimeUs) / 1e6, 1e-6, "park duration (s)");
        Assert.All(run.Measurements.Where(m => m.Kind == SensorKind.WheelSpeed), m => Assert.Equal(0.0, m.Value0));
        IReadOnlyList<MultipathEpisode> episodes = MeasurementGenerator.MultipathEpisodesOf(park.Truth, park.Suite, park.Seed);
        Assert.True(episodes.Count >= 10, $"{episodes.Count} episodes");
        Assert.All(episodes, e => AssertNear.Within(15.0, 60.0, e.BiasM, 1e-9, "park episode bias (m)"));
        // Folded GNSS speed at rest: E|N(0, s^2)| = s sqrt(2 / pi) (derived); mean over ~10 800 fixes within 0.005 m/s (> 7 standard errors).
        double meanSpeed = run.Measurements.Where(m => m.Kind == SensorKind.GnssVelocity).Average(m => m.Value0);
        AssertNear.Equal(park.Suite.GnssSpeedSigmaMps * Math.Sqrt(2 / Math.PI), meanSpeed, 0.005, "mean parked GNSS speed (m/s)");
    }

    [Fact]
    public void Presets_last_20_to_60_minutes_and_are_reproducible()
    {
        foreach (RealisticDrive drive in RealisticDrives.All())
        {
            double minutes = (drive.Truth.EndTimeUs - drive.Truth.StartTimeUs) / 60e6;
            if (drive.Name == "park-3h")
            {
                continue;
            }

            AssertNear.Within(20.0, 60.0, minutes, 0.0, $"{drive.Name} duration (min)");
        }

        RealisticDrive a = RealisticDrives.Multipath(), b = RealisticDrives.Multipath();
        Assert.Equal(GeneratorDefaultsTests.Sha256(a.Generate()), GeneratorDefaultsTests.Sha256(b.Generate()));
        Assert.NotEqual(GeneratorDefaultsTests.Sha256(a.Generate()), GeneratorDefaultsTests.Sha256(RealisticDrives.Multipath(a.Seed + 1).Generate()));
    }

    [Fact]
    public void Outage_preset_has_a_three_minute_gap_without_any_gnss()
    {
        RealisticDrive drive = RealisticDrives.Outage();
        TimeInterval outage = Assert.Single(drive.Suite.GnssOutages);
        AssertNear.Equal(180.0, outage.DurationUs / 1e6, 0.0, "outage (s)");
        ScenarioRun run = drive.Generate();
        Assert.DoesNotContain(run.Measurements, m => (m.Kind is SensorKind.GnssPosition or SensorKind.GnssVelocity) && outage.Contains(m.TimeUs));
        Assert.True(drive.Truth.At(outage.StartTimeUs).SpeedMps > 5.0, "the outage begins while driving");
    }

    [Fact]
    public void Hdop_only_receiver_reports_hdop_times_uere_as_drms_and_keeps_the_errors()
    {
        // HDOP x UERE is the horizontal DRMS (Misra & Enge, 2nd ed., ch. 6; from memory): 0.8 x 5 / sqrt(2) = 2.828427 m per axis (derived).
        RealisticDrive hdop = RealisticDrives.HdopOnly();
        ScenarioRun withHdop = hdop.Generate();
        ScenarioRun without = (hdop with { Suite = hdop.Suite with { GnssReportedHdop = null } }).Generate();
        for (int i = 0; i < withHdop.Measurements.Count; i++)
        {
            Measurement m = withHdop.Measurements[i];
            if (m.Kind == SensorKind.GnssPosition)
            {
                AssertNear.Equal(2.828427, m.AsGnssFix().AccuracyM, 1e-6, "reported sigma (m)");
                Assert.True(m.AsGnssFix().AccuracyFromHdop, "the fix says its accuracy came from the HDOP");
                Assert.False(without.Measurements[i].AsGnssFix().AccuracyFromHdop, "a stated accuracy is not marked");
                Assert.Equal(without.Measurements[i].Value0, m.Value0);
                Assert.Equal(without.Measurements[i].Value1, m.Value1);
            }
        }
    }

    [Fact]
    public void Course_rounded_to_a_tenth_of_a_degree_sometimes_reads_exactly_360()
    {
        // 2 pi rad written in degrees as rad x (180 / pi), the simulator's conversion, is exactly 360.0 (IEEE 754, checked here).
        ScenarioRun run = RealisticDrives.CleanSky().Generate();
        var courses = run.Measurements.Where(m => m.Kind == SensorKind.GnssVelocity && !double.IsNaN(m.Value1)).Select(m => m.Value1 * (180.0 / Math.PI)).ToList();
        Assert.Contains(360.0, courses);
        Assert.DoesNotContain(courses, c => c < 0 || c > 360.0);
        Assert.All(courses, c => AssertNear.Equal(Math.Round(c * 10) / 10, c, 1e-9, "course on the 0.1 degree grid (deg)"));
    }
}
