namespace FusionService.Estimation.Geodesy;

/// <summary>The series of T. Vincenty, Survey Review 23(176):88-93, 1975, shared by the iterative inverse and the
/// azimuth-search fallback. Symbols as in the paper: alpha is the azimuth of the geodesic at the equator,
/// sigma the arc length on the auxiliary sphere, 2 sigma_m the arc from the equator to the line's midpoint.
/// Equation numbers are quoted from memory.</summary>
internal static class VincentySeries
{
    /// <summary>lambda - L, the auxiliary-sphere minus ellipsoidal longitude difference (paper's eqs. 10-11, C and
    /// L = lambda - (1 - C) f sin(alpha) [sigma + C sin(sigma) (cos 2sigma_m + C cos(sigma) (-1 + 2 cos^2 2sigma_m))]).</summary>
    internal static double LongitudeExcess(
        double f, double sinAlpha, double cosSqAlpha, double sigma, double sinSigma, double cosSigma, double cos2SigmaM)
    {
        double c = f / 16.0 * cosSqAlpha * (4.0 + (f * (4.0 - (3.0 * cosSqAlpha))));
        return (1.0 - c) * f * sinAlpha
            * (sigma + (c * sinSigma * (cos2SigmaM + (c * cosSigma * (-1.0 + (2.0 * cos2SigmaM * cos2SigmaM))))));
    }

    /// <summary>s = b A (sigma - delta sigma), with u^2 = cos^2(alpha) (a^2 - b^2) / b^2 and the paper's A, B and
    /// delta sigma (eqs. 1-6 and 19).</summary>
    internal static double Distance(
        Ellipsoid e, double cosSqAlpha, double sigma, double sinSigma, double cosSigma, double cos2SigmaM)
    {
        double a = e.SemiMajorAxisM;
        double b = e.SemiMinorAxisM;
        double uSq = cosSqAlpha * ((a * a) - (b * b)) / (b * b);
        double bigA = 1.0 + (uSq / 16384.0 * (4096.0 + (uSq * (-768.0 + (uSq * (320.0 - (175.0 * uSq)))))));
        double bigB = uSq / 1024.0 * (256.0 + (uSq * (-128.0 + (uSq * (74.0 - (47.0 * uSq))))));
        double c2 = cos2SigmaM * cos2SigmaM;
        double deltaSigma = bigB * sinSigma * (cos2SigmaM + (bigB / 4.0 * ((cosSigma * (-1.0 + (2.0 * c2)))
            - (bigB / 6.0 * cos2SigmaM * (-3.0 + (4.0 * sinSigma * sinSigma)) * (-3.0 + (4.0 * c2))))));
        return b * bigA * (sigma - deltaSigma);
    }

    /// <summary>Sine and cosine of the reduced latitude beta, tan(beta) = (1 - f) tan(phi), well conditioned at the poles.</summary>
    internal static (double Sin, double Cos) ReducedLatitude(double latitudeRad, double f)
    {
        (double sinPhi, double cosPhi) = Math.SinCos(latitudeRad);
        double y = (1.0 - f) * sinPhi;
        double norm = Math.Sqrt((y * y) + (cosPhi * cosPhi));
        return (y / norm, cosPhi / norm);
    }
}
