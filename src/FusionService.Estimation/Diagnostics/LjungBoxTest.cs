using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// The Ljung-Box portmanteau statistic Q = N (N + 2) Σ_{k=1..h} r(k)² / (N - k) of the first h sample autocorrelations
/// r(k) of N values, approximately chi-square with h degrees of freedom when the series is white (Ljung and Box,
/// "On a measure of lack of fit in time series models", Biometrika 65(2), 1978; published).
/// </summary>
/// <remarks>
/// The weights (N + 2) / (N - k) correct the variance of r(k), which is (N - k) / (N (N + 2)) for white noise, so Q is
/// closer to its chi-square reference for moderate N than the Box-Pierce sum N Σ r(k)². When the autocorrelations come
/// from residuals of a fitted model of p parameters the degrees of freedom are h - p; a filter's innovations have no
/// fitted parameters here, so h is used.
/// </remarks>
public static class LjungBoxTest
{
    /// <summary>The statistic Q (dimensionless, non-negative; NaN when any r(k) is NaN).</summary>
    /// <param name="autocorrelation">r(1) .. r(h), h at least 1 and below <paramref name="sampleCount"/>.</param>
    /// <param name="sampleCount">Number N of values the autocorrelations are taken over.</param>
    /// <exception cref="ArgumentOutOfRangeException">No autocorrelation given, or h not below N.</exception>
    public static double Statistic(ReadOnlySpan<double> autocorrelation, long sampleCount)
    {
        int h = autocorrelation.Length;
        if (h < 1 || sampleCount <= h)
        {
            throw new ArgumentOutOfRangeException(nameof(sampleCount), sampleCount, "need at least one lag and more samples than lags");
        }

        double n = sampleCount, sum = 0;
        for (int k = 1; k <= h; k++)
        {
            double r = autocorrelation[k - 1];
            sum += r * r / (n - k);
        }

        return n * (n + 2) * sum;
    }

    /// <summary>
    /// The upper critical value χ²(1 - <paramref name="significance"/>; <paramref name="dof"/>): Q above it rejects
    /// whiteness at that level (MathNet.Numerics <c>ChiSquared.InvCDF</c>; h = 10 gives 18.307 and h = 20 gives 31.410
    /// at 0.05, NIST/SEMATECH e-Handbook 1.3.6.7.4).
    /// </summary>
    /// <param name="dof">Degrees of freedom h, at least 1.</param>
    /// <param name="significance">Level α in (0, 1), 0.05 by default.</param>
    public static double CriticalValue(int dof, double significance = 0.05)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(dof, 1);
        if (!(significance > 0 && significance < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(significance), significance, "must lie in (0, 1)");
        }

        return ChiSquared.InvCDF(dof, 1.0 - significance);
    }
}
