using FusionService.Estimation.Diagnostics;
using MathNet.Numerics.Distributions;
using MathNet.Numerics.Random;

namespace FusionService.Estimation.Tests.Diagnostics;

/// <summary>
/// Whiteness of normalised innovations: the ±1.96/√N band of each sample autocorrelation (Mehra 1970; Bar-Shalom, Li and
/// Kirubarajan 2001) and the Ljung-Box portmanteau statistic (Ljung and Box 1978) against chi-square critical values
/// (NIST/SEMATECH e-Handbook 1.3.6.7.4), with the check values of ../shared/check-values.md section 10.
/// </summary>
public sealed class InnovationWhitenessTestTests
{
    // check-values.md section 10, Gauss-Markov discretisation: tau = 45 s at dt = 1 s gives phi = exp(-1/45) = 0.978023 (derived).
    private const double GaussMarkovPhi = 0.978023;

    [Fact]
    public void Band_for_one_hundred_samples_is_0_196()
    {
        // check-values.md section 10 (Mehra 1970; Bar-Shalom, Li and Kirubarajan 2001; from memory): N = 100 gives
        // ±1.96/sqrt(100) = ±0.196 (derived).
        AssertNear.Equal(0.196, InnovationWhitenessTest.BandHalfWidth(100), 5e-5, "95 % band half-width of r(k), N = 100");
        Assert.True(double.IsNaN(InnovationWhitenessTest.BandHalfWidth(0)));
    }

    [Theory]
    // NIST/SEMATECH e-Handbook 1.3.6.7.4, upper 0.05 critical values of chi-square (published), the Ljung-Box
    // reference with h dof (check-values.md section 10), given to three decimals there.
    [InlineData(10, 18.307)]
    [InlineData(20, 31.410)]
    // Same table, check-values.md section 1 (published), five decimals.
    [InlineData(1, 3.84146)]
    [InlineData(4, 9.48773)]
    public void Ljung_Box_critical_values_match_the_handbook(int h, double published)
    {
        double tolerance = h >= 10 ? 5e-4 : 5e-6; // half a unit of the table's last digit
        AssertNear.Equal(published, LjungBoxTest.CriticalValue(h), tolerance, $"chi-square 0.95 quantile, {h} dof");
    }

    [Fact]
    public void Ljung_Box_Q_of_a_hand_series()
    {
        // Derived by hand. x = [2, -1, 1, -2, 0, 1], N = 6, h = 2, mean known to be zero:
        // C(0) = 4 + 1 + 1 + 4 + 0 + 1 = 11
        // C(1) = 2(-1) + (-1)(1) + (1)(-2) + (-2)(0) + (0)(1) = -5     -> r(1) = -5/11
        // C(2) = 2(1) + (-1)(-2) + (1)(0) + (-2)(1) = 2                  -> r(2) = 2/11
        // Q = N (N + 2) [r(1)^2 / (N - 1) + r(2)^2 / (N - 2)] = 48 [(25/121)/5 + (4/121)/4] = 48 * 6/121 = 288/121.
        double[] x = [2, -1, 1, -2, 0, 1];
        var result = InnovationWhitenessTest.Test(x, lags: 2, minimumSamples: 1);
        AssertNear.Equal(-5.0 / 11, result.Autocorrelation[0], 1e-15, "r(1)");
        AssertNear.Equal(2.0 / 11, result.Autocorrelation[1], 1e-15, "r(2)");
        AssertNear.Equal(288.0 / 121, result.LjungBoxQ, 1e-13, "Ljung-Box Q");
        Assert.Equal(2, result.Dof);
        Assert.Equal(WhitenessVerdict.White, result.Verdict); // 2.38 < 5.99146 (section 1, dof 2)

        // About the sample mean m = 1/6 (derived): deviations [11, -7, 5, -13, -1, 5] / 6, lag-1 products
        // (-77 - 35 - 65 + 13 - 5) / 36 = -169/36, sum of squares 11 - 6/36 = 65/6, so r(1) = -169/390.
        var centred = InnovationWhitenessTest.Test(x, lags: 2, minimumSamples: 1, subtractMean: true);
        AssertNear.Equal(-169.0 / 390, centred.Autocorrelation[0], 1e-15, "r(1) about the sample mean");
    }

    [Fact]
    public void Streaming_accumulator_matches_the_direct_sums()
    {
        // Independent check: the direct two-pass estimator, written out here, on a random series.
        var rng = new MersenneTwister(7);
        double[] x = [.. Normal.Samples(rng, 0.3, 1.0).Take(500)];
        foreach (bool subtractMean in new[] { false, true })
        {
            var result = InnovationWhitenessTest.Test(x, lags: 12, subtractMean: subtractMean);
            double m = subtractMean ? x.Average() : 0;
            double c0 = x.Sum(v => (v - m) * (v - m));
            for (int k = 1; k <= 12; k++)
            {
                double ck = 0;
                for (int t = 0; t + k < x.Length; t++)
                {
                    ck += (x[t] - m) * (x[t + k] - m);
                }

                AssertNear.Equal(ck / c0, result.Autocorrelation[k - 1], 1e-12, $"r({k}), subtractMean {subtractMean}");
            }
        }
    }

    [Fact]
    public void White_Gaussian_series_are_rejected_at_about_the_nominal_rate()
    {
        // M = 4000 independent white N(0, 1) series of N = 500, h = 10, alpha = 0.05. If Q were exactly chi-square the
        // rejection count would be binomial(M, 0.05): standard error sqrt(0.05 * 0.95 / 4000) = 0.00345, so the rate must
        // lie within 0.05 ± 3 standard errors (± 0.0103). The same holds for the fraction of the M h autocorrelations
        // outside ±1.96/sqrt(N) (M h = 40000 nearly independent trials: standard error 0.00109, ± 3 of them).
        const int runs = 4000, n = 500, h = 10;
        var rng = new MersenneTwister(20240612);
        var series = new double[n];
        int rejected = 0, outside = 0;
        for (int run = 0; run < runs; run++)
        {
            Normal.Samples(rng, series, 0, 1);
            var result = InnovationWhitenessTest.Test(series, h);
            Assert.NotEqual(WhitenessVerdict.TooFewSamples, result.Verdict);
            rejected += result.Verdict == WhitenessVerdict.Correlated ? 1 : 0;
            outside += result.LagsOutsideBand;
        }

        double qError = Math.Sqrt(0.05 * 0.95 / runs);
        AssertNear.Equal(0.05, rejected / (double)runs, 3 * qError, "rejection rate of Ljung-Box Q on white series");
        double bandError = Math.Sqrt(0.05 * 0.95 / (runs * h));
        AssertNear.Equal(0.05, outside / (double)(runs * h), 3 * bandError, "fraction of r(k) outside the 95 % band");
    }

    [Theory]
    [InlineData(100)]
    [InlineData(3600)]
    public void Gauss_Markov_error_at_45_s_and_1_Hz_is_flagged(int n)
    {
        // An AR(1) series with phi = 0.978023 (check-values.md section 10: tau = 45 s at 1 Hz, derived), started in its
        // stationary distribution. Its lag-1 autocorrelation is far outside the band, so Q must exceed 18.307.
        var x = Ar1(GaussMarkovPhi, n, seed: 45);
        var result = InnovationWhitenessTest.Test(x);
        Assert.Equal(WhitenessVerdict.Correlated, result.Verdict);
        Assert.True(result.LjungBoxQ > result.CriticalValue, $"Q {result.LjungBoxQ} not above {result.CriticalValue}");
        Assert.True(result.Lag1 > result.BandHalfWidth, $"r(1) {result.Lag1} inside ±{result.BandHalfWidth}");
        Assert.Equal(10, result.LagsOutsideBand);
    }

    [Theory]
    // Bartlett's formula for AR(1) (Box and Jenkins, from memory): Var r(1) ≈ (1 - phi^2) / N for large N, and
    // r(k) ≈ phi^k. Tolerance: 4 standard errors of r(1) plus the O(1/N) bias of the estimator, (1 + 4 phi) / N
    // (Marriott and Pope 1954 for the mean-corrected estimator, from memory; an upper bound for the zero-mean one).
    [InlineData(0.5, 20000)]
    [InlineData(GaussMarkovPhi, 3600)]
    public void Lag_one_autocorrelation_of_an_AR1_series_matches_phi(double phi, int n)
    {
        var x = Ar1(phi, n, seed: 1970);
        var result = InnovationWhitenessTest.Test(x, lags: 2);
        double tolerance = (4 * Math.Sqrt((1 - (phi * phi)) / n)) + ((1 + (4 * phi)) / n);
        AssertNear.Equal(phi, result.Lag1, tolerance, $"r(1) of AR(1), phi {phi}, N {n}");
        // r(2) ≈ phi^2 with Bartlett variance (1/N)[(1 + phi^2)(1 - phi^4)/(1 - phi^2) - 4 phi^4] = (1 - phi^2)(1 + 3 phi^2) / N
        // (same source, derived for k = 2); the bias allowance doubled for the second lag (a design choice).
        double tolerance2 = (4 * Math.Sqrt((1 - (phi * phi)) * (1 + (3 * phi * phi)) / n)) + (2 * (1 + (4 * phi)) / n);
        AssertNear.Equal(phi * phi, result.Autocorrelation[1], tolerance2, $"r(2) of AR(1), phi {phi}, N {n}");
    }

    [Fact]
    public void Too_few_samples_and_degenerate_series()
    {
        var rng = new MersenneTwister(3);
        double[] short49 = [.. Normal.Samples(rng, 0, 1).Take(49)];
        Assert.Equal(WhitenessVerdict.TooFewSamples, InnovationWhitenessTest.Test(short49).Verdict);

        // Fewer values than lags: the autocorrelations that need more values are NaN, Q is NaN.
        var tiny = InnovationWhitenessTest.Test([1.0, -1.0, 0.5], lags: 5, minimumSamples: 1);
        Assert.Equal(WhitenessVerdict.TooFewSamples, tiny.Verdict);
        Assert.True(double.IsNaN(tiny.LjungBoxQ));
        Assert.True(double.IsNaN(tiny.Autocorrelation[4]));

        // All zeros: no variance, no autocorrelation.
        var zeros = InnovationWhitenessTest.Test(new double[200]);
        Assert.Equal(WhitenessVerdict.TooFewSamples, zeros.Verdict);
        Assert.True(double.IsNaN(zeros.Lag1));

        // Non-finite values are skipped, not counted.
        double[] withNaN = [.. short49, double.NaN, double.PositiveInfinity, 0.1];
        Assert.Equal(50, InnovationWhitenessTest.Test(withNaN).SampleCount);
    }

    [Fact]
    public void A_constant_bias_counts_as_correlation_when_the_mean_is_known()
    {
        // Whitened innovations pulling one way by one standard deviation: r(k) about zero is about 1/2 at every lag.
        var rng = new MersenneTwister(11);
        double[] biased = [.. Normal.Samples(rng, 1.0, 1.0).Take(200)];
        Assert.Equal(WhitenessVerdict.Correlated, InnovationWhitenessTest.Test(biased).Verdict);
    }

    [Fact]
    public void Accumulator_reset_forgets_everything()
    {
        var a = new AutocorrelationAccumulator(3);
        a.AddRange([5.0, 5.0, 5.0, 5.0]);
        a.Reset();
        double[] x = [2, -1, 1, -2, 0, 1];
        a.AddRange(x);
        var r = new double[2];
        a.Autocorrelation(r);
        AssertNear.Equal(-5.0 / 11, r[0], 1e-15, "r(1) after reset");
        Assert.Throws<ArgumentOutOfRangeException>(() => a.Autocorrelation(new double[4]));
    }

    private static double[] Ar1(double phi, int n, int seed)
    {
        var rng = new MersenneTwister(seed);
        var x = new double[n];
        double drive = Math.Sqrt(1 - (phi * phi)); // q / sigma^2 = 1 - phi^2 keeps the variance at 1 (section 10, derived)
        x[0] = Normal.Sample(rng, 0, 1);
        for (int t = 1; t < n; t++)
        {
            x[t] = (phi * x[t - 1]) + (drive * Normal.Sample(rng, 0, 1));
        }

        return x;
    }
}
