namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Whiteness test of a filter's normalised innovations: for a consistent filter the whitened innovations
/// w = L⁻¹ ν (S = L Lᵀ) are standard normal and independent over time, so their sample autocorrelations r(k) at lags
/// k = 1..h each lie within ±1.96 / √N with 95 % probability (Mehra, "On the identification of variances and adaptive
/// Kalman filtering", IEEE Trans. Automatic Control 15(2), 1970; Bar-Shalom, Li and Kirubarajan 2001, time-average
/// autocorrelation test; sections from memory), and jointly the Ljung-Box statistic Q of <see cref="LjungBoxTest"/>
/// stays below its chi-square critical value with h degrees of freedom. The verdict is that of Q (one test at level α);
/// the lags outside the band are reported for reading, since with h lags about h/20 of them leave it by chance.
/// </summary>
/// <remarks>
/// <para>
/// A mean NIS cannot see correlation: innovations that pull the same way for a minute can have the right size each.
/// Correlated innovations mean the errors persist from one measurement to the next (coloured measurement noise such as
/// GNSS multipath and atmosphere, or a model that lags the motion), so the filter averages fewer independent errors than
/// it believes and its covariance is too small.
/// </para>
/// <para>
/// The mean of the whitened innovations is taken as known (zero) by default, so a bias that persists over the window
/// counts as correlation (<see cref="AutocorrelationAccumulator.Autocorrelation"/>). The lag is in samples of the one
/// sensor, not in seconds: an irregularly sampled sensor is tested in its own sample order.
/// </para>
/// <para>
/// A sensor with a 2-D innovation (GNSS position east/north) gives two whitened components; each is tested as its own
/// series, so that a lag is always one measurement of that sensor and the two components, independent of each other by
/// the whitening, are not interleaved into a series whose odd lags would mean half a measurement. The caller combines the
/// components' verdicts (at level α / 2 each, Bonferroni, when either failing condemns the sensor).
/// </para>
/// </remarks>
public static class InnovationWhitenessTest
{
    /// <summary>Default number of lags h.</summary>
    public const int DefaultLags = 10;

    /// <summary>Default fewest samples for a verdict other than <see cref="WhitenessVerdict.TooFewSamples"/> (a design choice: five times the default lags).</summary>
    public const int DefaultMinimumSamples = 50;

    /// <summary>The 0.975 quantile of the standard normal, for the two-sided 95 % band of one autocorrelation.</summary>
    public const double Z95 = 1.959963984540054;

    /// <summary>Half-width z / √N of the band of a single sample autocorrelation of N white values (1.96 / √N for 95 %); NaN for N = 0.</summary>
    public static double BandHalfWidth(long sampleCount, double z = Z95) =>
        sampleCount > 0 ? z / Math.Sqrt(sampleCount) : double.NaN;

    /// <summary>Tests <paramref name="series"/> (normalised innovations in time order; non-finite values are skipped).</summary>
    /// <param name="series">The values.</param>
    /// <param name="lags">Number of lags h, at least 1.</param>
    /// <param name="significance">Level α of the Ljung-Box test, 0.05 by default.</param>
    /// <param name="minimumSamples">Fewest values for a verdict; fewer, or not more than h, give <see cref="WhitenessVerdict.TooFewSamples"/>.</param>
    /// <param name="subtractMean">Whether to subtract the sample mean (false: the mean is known to be zero).</param>
    public static WhitenessResult Test(
        ReadOnlySpan<double> series, int lags = DefaultLags, double significance = 0.05, int minimumSamples = DefaultMinimumSamples, bool subtractMean = false)
    {
        var accumulator = new AutocorrelationAccumulator(lags);
        accumulator.AddRange(series);
        return Test(accumulator, significance, minimumSamples, subtractMean);
    }

    /// <summary>Tests the values added to <paramref name="accumulator"/>, over its <see cref="AutocorrelationAccumulator.MaxLag"/> lags.</summary>
    /// <param name="accumulator">The series so far.</param>
    /// <param name="significance">Level α of the Ljung-Box test, 0.05 by default.</param>
    /// <param name="minimumSamples">Fewest values for a verdict; fewer, or not more than h, give <see cref="WhitenessVerdict.TooFewSamples"/>.</param>
    /// <param name="subtractMean">Whether to subtract the sample mean (false: the mean is known to be zero).</param>
    public static WhitenessResult Test(
        AutocorrelationAccumulator accumulator, double significance = 0.05, int minimumSamples = DefaultMinimumSamples, bool subtractMean = false)
    {
        ArgumentNullException.ThrowIfNull(accumulator);
        int h = accumulator.MaxLag;
        long n = accumulator.Count;
        double critical = LjungBoxTest.CriticalValue(h, significance);
        var r = new double[h];
        accumulator.Autocorrelation(r, subtractMean);
        double band = BandHalfWidth(n);
        int outside = 0;
        bool complete = n > h;
        foreach (double rk in r)
        {
            if (double.IsNaN(rk))
            {
                complete = false;
            }
            else if (Math.Abs(rk) > band)
            {
                outside++;
            }
        }

        double q = complete ? LjungBoxTest.Statistic(r, n) : double.NaN;
        var verdict = !complete || n < minimumSamples ? WhitenessVerdict.TooFewSamples
            : q > critical ? WhitenessVerdict.Correlated
            : WhitenessVerdict.White;
        return new WhitenessResult(n, r, band, outside, q, h, critical, significance, verdict);
    }
}
