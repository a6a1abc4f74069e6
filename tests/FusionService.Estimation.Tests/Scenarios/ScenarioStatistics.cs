// Reference intervals for the noise checks, from MathNet.Numerics distributions.
using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Tests.Scenarios;

internal static class ScenarioStatistics
{
    /// <summary>
    /// Two-sided interval of the sample variance s² of n Gaussian values with standard deviation sigma:
    /// (n - 1) s² / sigma² is chi-square with n - 1 degrees of freedom (derived; quantiles from MathNet ChiSquared.InvCDF).
    /// </summary>
    public static (double Low, double High) SampleVarianceInterval(double sigma, int n, double confidence)
    {
        double tail = (1.0 - confidence) / 2.0;
        double dof = n - 1;
        return (sigma * sigma * ChiSquared.InvCDF(dof, tail) / dof, sigma * sigma * ChiSquared.InvCDF(dof, 1.0 - tail) / dof);
    }

    /// <summary>Two-sided interval of a chi-square variable with <paramref name="dof"/> degrees of freedom (MathNet ChiSquared.InvCDF).</summary>
    public static (double Low, double High) ChiSquareInterval(double dof, double confidence)
    {
        double tail = (1.0 - confidence) / 2.0;
        return (ChiSquared.InvCDF(dof, tail), ChiSquared.InvCDF(dof, 1.0 - tail));
    }

    /// <summary>Half-width of the interval of the mean of n values with standard deviation sigma (normal quantile, MathNet Normal.InvCDF).</summary>
    public static double MeanHalfWidth(double sigma, int n, double confidence) =>
        Normal.InvCDF(0.0, 1.0, 1.0 - ((1.0 - confidence) / 2.0)) * sigma / Math.Sqrt(n);

    /// <summary>Two-sided interval of a binomial count (n trials, probability p), from MathNet Binomial.CDF.</summary>
    public static (int Low, int High) BinomialInterval(double p, int n, double confidence)
    {
        double tail = (1.0 - confidence) / 2.0;
        int low = 0;
        while (low < n && Binomial.CDF(p, n, low) < tail)
        {
            low++;
        }

        int high = low;
        while (high < n && Binomial.CDF(p, n, high) < 1.0 - tail)
        {
            high++;
        }

        return (low, high);
    }

    public static (double Mean, double Variance, int Count) MeanAndVariance(IEnumerable<double> values)
    {
        double mean = 0, m2 = 0;
        int n = 0;
        foreach (double x in values)
        {
            n++;
            double delta = x - mean;
            mean += delta / n;
            m2 += delta * (x - mean);
        }

        return (mean, n > 1 ? m2 / (n - 1) : double.NaN, n);
    }
}
