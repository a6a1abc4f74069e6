using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Gating;

/// <summary>
/// Validation gate on the normalised innovation squared (NIS): a measurement of dimension m is accepted when
/// νᵀ S⁻¹ ν ≤ χ²_m(p), the p-quantile of the chi-square distribution with m degrees of freedom
/// (Bar-Shalom, Li and Kirubarajan 2001, validation region; section from memory).
/// </summary>
public sealed class ChiSquareGate
{
    /// <summary>Largest measurement dimension the gate precomputes a threshold for.</summary>
    public const int MaxDimension = 4;

    private readonly double[] _thresholds = new double[MaxDimension + 1];

    /// <summary>Creates a gate that passes a consistent measurement with probability <paramref name="probability"/>.</summary>
    /// <param name="probability">Gate probability in (0, 1); 0.9997 by default, so that clean data are rejected about 3 times in 10,000.</param>
    public ChiSquareGate(double probability = 0.9997)
    {
        if (!(probability > 0 && probability < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(probability), probability, "gate probability must lie in (0, 1)");
        }

        Probability = probability;
        for (int m = 1; m <= MaxDimension; m++)
        {
            _thresholds[m] = Quantile(probability, m);
        }
    }

    /// <summary>Probability that a measurement consistent with the filter passes the gate.</summary>
    public double Probability { get; }

    /// <summary>NIS threshold for a measurement of dimension <paramref name="dimension"/> (1 to <see cref="MaxDimension"/>).</summary>
    public double Threshold(int dimension) => _thresholds[dimension];

    /// <summary>Whether a NIS value of the given dimension passes the gate (NaN never passes).</summary>
    public bool Passes(double nis, int dimension) => nis <= _thresholds[dimension];

    /// <summary>The <paramref name="probability"/>-quantile of the chi-square distribution with <paramref name="dof"/> degrees of freedom.</summary>
    /// <remarks>Two degrees of freedom have the closed form -2 ln(1 - p); others use MathNet.Numerics' inverse CDF.</remarks>
    public static double Quantile(double probability, int dof)
    {
        if (dof < 1)
        {
            throw new ArgumentOutOfRangeException(nameof(dof), dof, "degrees of freedom must be at least 1");
        }

        return dof == 2 ? -2.0 * Math.Log(1.0 - probability) : ChiSquared.InvCDF(dof, probability);
    }
}
