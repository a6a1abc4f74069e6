using FusionService.Estimation.Gating;

namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Horizontal error ellipse of a position covariance: the region that contains the true position with probability
/// <see cref="Probability"/> for a Gaussian error (semi-axes sqrt(λ χ²₂(p)), λ the eigenvalues of the 2 x 2 east/north
/// covariance; Bar-Shalom, Li and Kirubarajan 2001, section from memory).
/// </summary>
/// <param name="SemiMajorM">Semi-major axis, metres.</param>
/// <param name="SemiMinorM">Semi-minor axis, metres.</param>
/// <param name="OrientationRad">Direction of the major axis, radians clockwise from north, in (-π/2, π/2].</param>
/// <param name="Probability">Containment probability.</param>
public readonly record struct ErrorEllipse(double SemiMajorM, double SemiMinorM, double OrientationRad, double Probability)
{
    /// <summary>The ellipse of an east/north covariance (variances in m², covariance in m²).</summary>
    /// <param name="varEastM2">Variance of east.</param>
    /// <param name="varNorthM2">Variance of north.</param>
    /// <param name="covEastNorthM2">Covariance of east and north.</param>
    /// <param name="probability">Containment probability, 0.95 by default.</param>
    public static ErrorEllipse FromCovariance(double varEastM2, double varNorthM2, double covEastNorthM2, double probability = 0.95)
    {
        if (!double.IsFinite(varEastM2) || !double.IsFinite(varNorthM2) || !double.IsFinite(covEastNorthM2) || varEastM2 < 0 || varNorthM2 < 0)
        {
            throw new ArgumentException("covariance must be finite with non-negative variances");
        }

        double mean = 0.5 * (varEastM2 + varNorthM2);
        double half = 0.5 * (varEastM2 - varNorthM2);
        double radius = Math.Sqrt((half * half) + (covEastNorthM2 * covEastNorthM2));
        double major = mean + radius;
        double minor = Math.Max(mean - radius, 0.0);
        double scale = ChiSquareGate.Quantile(probability, 2);

        // Major-axis angle from east (counter-clockwise) is atan2(2c, a - b) / 2; clockwise from north is π/2 minus it.
        double fromEast = 0.5 * Math.Atan2(2.0 * covEastNorthM2, varEastM2 - varNorthM2);
        double fromNorth = (0.5 * Math.PI) - fromEast;
        if (fromNorth > 0.5 * Math.PI)
        {
            fromNorth -= Math.PI;
        }

        return new ErrorEllipse(Math.Sqrt(major * scale), Math.Sqrt(minor * scale), fromNorth, probability);
    }
}
