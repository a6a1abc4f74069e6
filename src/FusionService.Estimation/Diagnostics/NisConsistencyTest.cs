using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Chi-square test of the mean of K normalised innovations squared, each of dimension m: for a consistent
/// linear-Gaussian filter K · mean is chi-square with K m degrees of freedom, so the two-sided region of probability
/// 1 - α is [χ²(α/2; K m), χ²(1 - α/2; K m)] / K (Bar-Shalom, Li and Kirubarajan 2001, NIS test; section from memory).
/// </summary>
public static class NisConsistencyTest
{
    /// <summary>The interval for the mean NIS of <paramref name="count"/> samples of total degrees of freedom <paramref name="totalDof"/>.</summary>
    /// <param name="count">Number of samples K, at least 1.</param>
    /// <param name="totalDof">Sum of the samples' dimensions (K m when all have dimension m).</param>
    /// <param name="probability">Probability of the region, 0.95 by default.</param>
    public static (double Lower, double Upper) Interval(int count, int totalDof, double probability = 0.95)
    {
        if (count < 1 || totalDof < 1)
        {
            throw new ArgumentOutOfRangeException(nameof(count), "need at least one sample with at least one degree of freedom");
        }

        double tail = 0.5 * (1.0 - probability);
        return (ChiSquared.InvCDF(totalDof, tail) / count, ChiSquared.InvCDF(totalDof, 1.0 - tail) / count);
    }

    /// <summary>Verdict for a mean NIS of <paramref name="count"/> samples; fewer than <paramref name="minimumCount"/> gives <see cref="ConsistencyVerdict.Insufficient"/>.</summary>
    public static ConsistencyVerdict Judge(double meanNis, int count, int totalDof, int minimumCount = 10, double probability = 0.95)
    {
        if (count < minimumCount || count == 0)
        {
            return ConsistencyVerdict.Insufficient;
        }

        (double lower, double upper) = Interval(count, totalDof, probability);
        return meanNis > upper ? ConsistencyVerdict.TooOptimistic
            : meanNis < lower ? ConsistencyVerdict.TooPessimistic
            : ConsistencyVerdict.Consistent;
    }
}
