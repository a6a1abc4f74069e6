using FusionService.Estimation.Geodesy;
using MathNet.Numerics;

namespace FusionService.Estimation.Tests.Geodesy;

/// <summary>WGS-84 meridian arc by numerical quadrature of the meridian radius of curvature
/// M(phi) = a (1 - e^2) / (1 - e^2 sin^2 phi)^(3/2) (derived; Gauss-Legendre, MathNet.Numerics).</summary>
internal static class Meridian
{
    public static double ArcM(double fromLatRad, double toLatRad)
    {
        double a = Wgs84.SemiMajorAxisM;
        double e2 = Wgs84.FirstEccentricitySquared;
        return Integrate.GaussLegendre(
            phi => a * (1 - e2) / Math.Pow(1 - (e2 * Math.Sin(phi) * Math.Sin(phi)), 1.5),
            fromLatRad,
            toLatRad,
            order: 256);
    }

    public static double QuarterM() => ArcM(0, Math.PI / 2);
}
