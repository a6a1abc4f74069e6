using FusionService.Estimation.Measurements;
using FusionService.Scenarios;
using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Tests.Scenarios;

/// <summary>Issue 12: the time-correlated GNSS position error of <see cref="MeasurementGenerator"/>.</summary>
public class CorrelatedGnssErrorTests
{
    // Two-sided 99.9 % normal quantile (MathNet Normal.InvCDF): the tolerances below are 3.29 standard deviations of the
    // statistic's sampling distribution, so a correct generator fails about once in a thousand seeds and these fixed seeds pass.
    private static readonly double Z999 = Normal.InvCDF(0.0, 1.0, 0.9995);

    private static ScenarioRun ParkedGnssOnly(double hours, SensorSuite suite, int seed)
    {
        TruthTrajectory truth = RouteDriver.Park(0, 0, 0, hours * 3600.0, new RouteDriverOptions { SamplePeriodUs = 1_000_000 });
        return MeasurementGenerator.Generate(truth, suite with { GnssVelocityEnabled = false, WheelSpeedEnabled = false, ImuEnabled = false }, seed);
    }

    private static double Lag1Autocorrelation(IReadOnlyList<double> x)
    {
        double mean = x.Average();
        double c0 = 0, c1 = 0;
        for (int i = 0; i < x.Count; i++)
        {
            c0 += (x[i] - mean) * (x[i] - mean);
            if (i > 0)
            {
                c1 += (x[i] - mean) * (x[i - 1] - mean);
            }
        }

        return c1 / c0;
    }

    [Fact]
    public void Gauss_Markov_discretisation_matches_the_check_value()
    {
        // Brown & Hwang 2012, first-order Gauss-Markov process (from memory); check value tau = 45 s, dt = 1 s:
        // phi = 0.978023, q / sigma^2 = 0.043471 (derived; check-values.md section 10). Six decimals given: tolerance 5e-7.
        AssertNear.Equal(0.978023, FirstOrderGaussMarkov.Phi(1.0, 45.0), 5e-7, "phi (1)");
        AssertNear.Equal(0.043471, FirstOrderGaussMarkov.DrivingVarianceRatio(1.0, 45.0), 5e-7, "q / sigma^2 (1)");
        AssertNear.Equal(1.0, FirstOrderGaussMarkov.Phi(0.0, 45.0), 0.0, "phi at dt = 0 (1)");
        Assert.Throws<ArgumentOutOfRangeException>(() => FirstOrderGaussMarkov.Phi(1.0, 0.0));
        Assert.Throws<ArgumentOutOfRangeException>(() => FirstOrderGaussMarkov.DrivingVarianceRatio(double.NaN, 45.0));
    }

    [Fact]
    public void Correlated_part_has_lag1_autocorrelation_phi_and_stationary_variance_sigma_squared()
    {
        // 40 h of 1 Hz fixes, all variance correlated (tau = 45 s, sigma 3 m): phi = 0.978023 (Brown & Hwang 2012, derived).
        // Lag-1 sample autocorrelation of an AR(1) series: variance (1 - phi^2) / N (Bartlett 1946, from memory).
        // Sample variance of an AR(1) series: variance (2 sigma^4 / N) (1 + phi^2) / (1 - phi^2) (Bartlett 1946, from memory).
        // Mean: variance sigma^2 / N_eff, N_eff = N (1 - phi) / (1 + phi) (Zwiers & von Storch 1995, check-values.md section 10).
        const double sigmaM = 3.0, tauS = 45.0;
        ScenarioRun run = ParkedGnssOnly(40, new SensorSuite { GnssSigmaM = sigmaM, GnssCorrelatedVarianceFraction = 1.0, GnssCorrelationTauS = tauS }, 4501);
        double phi = FirstOrderGaussMarkov.Phi(1.0, tauS);
        var east = run.MeasurementTruths.Select(t => t.CorrelatedErrorEastM).ToList();
        var north = run.MeasurementTruths.Select(t => t.CorrelatedErrorNorthM).ToList();
        int n = east.Count;
        Assert.Equal(40 * 3600 + 1, n);
        foreach ((string axis, List<double> x) in new[] { ("east", east), ("north", north) })
        {
            AssertNear.Equal(phi, Lag1Autocorrelation(x), Z999 * Math.Sqrt((1 - (phi * phi)) / n), $"{axis} lag-1 autocorrelation (1)");
            (double mean, double variance, _) = ScenarioStatistics.MeanAndVariance(x);
            double varianceSd = sigmaM * sigmaM * Math.Sqrt(2.0 / n * (1 + (phi * phi)) / (1 - (phi * phi)));
            AssertNear.Equal(sigmaM * sigmaM, variance, Z999 * varianceSd, $"{axis} stationary variance (m²)");
            double nEff = n * (1 - phi) / (1 + phi);
            AssertNear.Equal(0.0, mean, Z999 * sigmaM / Math.Sqrt(nEff), $"{axis} mean (m)");
        }

        // With no white part the whole error is the correlated one.
        Assert.All(run.MeasurementTruths, t => Assert.Equal(t.CorrelatedErrorEastM, t.ErrorEastM));
    }

    [Fact]
    public void Correlated_part_starts_from_its_stationary_distribution()
    {
        // The first fix of 1000 seeds: Var = sigma_corr^2 (chi-square 99 % interval of the sample variance, MathNet, derived).
        var suite = new SensorSuite { GnssSigmaM = 4.0, GnssCorrelatedVarianceFraction = 0.5, GnssCorrelationTauS = 90.0 };
        var first = new List<double>();
        for (int seed = 0; seed < 1000; seed++)
        {
            ScenarioRun run = ParkedGnssOnly(10.0 / 3600.0, suite, seed);
            first.Add(run.MeasurementTruths[0].CorrelatedErrorEastM);
            first.Add(run.MeasurementTruths[0].CorrelatedErrorNorthM);
        }

        (_, double variance, int count) = ScenarioStatistics.MeanAndVariance(first);
        (double low, double high) = ScenarioStatistics.SampleVarianceInterval(suite.GnssCorrelatedSigmaM, count, 0.99);
        AssertNear.Within(low, high, variance, 0.0, "first-fix correlated error variance (m²)");
    }

    [Fact]
    public void Reported_accuracy_is_the_total_and_the_variance_splits_as_configured()
    {
        // Split: sigma_corr^2 + sigma_white^2 = sigma_total^2 = reported^2 (the definition). Over 30 h of 1 Hz fixes with
        // 60 % correlated (tau 30 s): the white part (error - correlated part) is i.i.d., its sample variance is checked
        // with the chi-square interval (derived); the total has autocorrelation rho_k = f phi^|k|, so by Bartlett (1946,
        // from memory) Var s^2 = (2 sigma^4 / N) (1 + 2 f^2 phi^2 / (1 - phi^2)) (derived).
        const double sigmaM = 3.0, fraction = 0.6, tauS = 30.0;
        var suite = new SensorSuite { GnssSigmaM = sigmaM, GnssCorrelatedVarianceFraction = fraction, GnssCorrelationTauS = tauS };
        AssertNear.Equal(sigmaM * sigmaM, (suite.GnssCorrelatedSigmaM * suite.GnssCorrelatedSigmaM) + (suite.GnssWhiteSigmaM * suite.GnssWhiteSigmaM), 1e-12, "split variance (m²)");
        AssertNear.Equal(fraction * sigmaM * sigmaM, suite.GnssCorrelatedSigmaM * suite.GnssCorrelatedSigmaM, 1e-12, "correlated variance (m²)");
        ScenarioRun run = ParkedGnssOnly(30, suite, 3001);
        Assert.All(run.Measurements, m => Assert.Equal((float)sigmaM, m.Value2));
        int n = run.Measurements.Count;
        double phi = FirstOrderGaussMarkov.Phi(1.0, tauS);
        double totalSd = sigmaM * sigmaM * Math.Sqrt(2.0 / n * (1 + (2 * fraction * fraction * phi * phi / (1 - (phi * phi)))));
        foreach (bool eastAxis in new[] { true, false })
        {
            string axis = eastAxis ? "east" : "north";
            var total = run.MeasurementTruths.Select(t => eastAxis ? t.ErrorEastM : t.ErrorNorthM).ToList();
            var white = run.MeasurementTruths.Select(t => eastAxis ? t.ErrorEastM - t.CorrelatedErrorEastM : t.ErrorNorthM - t.CorrelatedErrorNorthM).ToList();
            (_, double totalVariance, _) = ScenarioStatistics.MeanAndVariance(total);
            AssertNear.Equal(sigmaM * sigmaM, totalVariance, Z999 * totalSd, $"{axis} total error variance (m²)");
            (_, double whiteVariance, int count) = ScenarioStatistics.MeanAndVariance(white);
            (double low, double high) = ScenarioStatistics.SampleVarianceInterval(suite.GnssWhiteSigmaM, count, 0.999);
            AssertNear.Within(low, high, whiteVariance, 0.0, $"{axis} white error variance (m²)");
            AssertNear.Equal(0.0, Lag1Autocorrelation(white), Z999 / Math.Sqrt(count), $"{axis} white lag-1 autocorrelation (1)");
        }

        // The recorded error is what the fix carries (recovered from latitude/longitude).
        for (int i = 0; i < 100; i++)
        {
            Measurement m = run.Measurements[i];
            run.Truth.ToLocalM(m.Value0, m.Value1, out double e, out double nn);
            TruthSample s = run.Truth.At(m.TimeUs);
            AssertNear.Equal(run.MeasurementTruths[i].ErrorEastM, e - s.EastM, 1e-6, "recorded east error (m)");
            AssertNear.Equal(run.MeasurementTruths[i].ErrorNorthM, nn - s.NorthM, 1e-6, "recorded north error (m)");
        }
    }

    [Fact]
    public void Correlated_draws_do_not_depend_on_outages()
    {
        // Each noise source has its own stream and propagates every epoch: an outage removes fixes and changes no other.
        var suite = new SensorSuite { GnssCorrelatedVarianceFraction = 0.7, GnssCorrelationTauS = 60 };
        ScenarioRun full = ParkedGnssOnly(0.2, suite, 77);
        ScenarioRun gap = ParkedGnssOnly(0.2, suite with { GnssOutages = [TimeInterval.FromDuration(full.Truth.StartTimeUs + 100_000_000, 120)] }, 77);
        Assert.Equal(full.Measurements.Count - 120, gap.Measurements.Count);
        var byKeyTime = full.Measurements.Zip(full.MeasurementTruths).ToDictionary(p => p.First.TimeUs);
        foreach ((Measurement m, MeasurementTruth t) in gap.Measurements.Zip(gap.MeasurementTruths))
        {
            Assert.Equal(byKeyTime[m.TimeUs].Second.ErrorEastM, t.ErrorEastM);
            Assert.Equal(byKeyTime[m.TimeUs].First.Value0, m.Value0);
        }
    }
}
