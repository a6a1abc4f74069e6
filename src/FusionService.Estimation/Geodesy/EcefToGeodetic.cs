namespace FusionService.Estimation.Geodesy;

/// <summary>Earth-centred, earth-fixed coordinates to geodetic latitude, longitude and height, in closed form.</summary>
/// <remarks>
/// Method: H. Vermeille, "Direct transformation from geocentric coordinates to geodetic coordinates",
/// Journal of Geodesy 76(8):451-454, 2002, which reduces the problem to one real root of a cubic in u:
/// p = (X^2 + Y^2) / a^2, q = (1 - e^2) Z^2 / a^2, r = (p + q - e^4) / 6, s = e^4 p q / (4 r^3),
/// t = cbrt(1 + s + sqrt(s (2 + s))), u = r (1 + t + 1/t), v = sqrt(u^2 + e^4 q), w = e^2 (u + v - q) / (2 v),
/// k = sqrt(u + v + w^2) - w, D = k sqrt(X^2 + Y^2) / (k + e^2), phi = atan2(Z, D),
/// h = (k + e^2 - 1) / k * sqrt(D^2 + Z^2).
/// The formulas are evaluated in forms multiplied through by r^3 (so r = 0 is harmless) and with the
/// subtractions u + v (for u &lt; 0) and sqrt(u + v + w^2) - w rewritten as quotients, to avoid cancellation.
/// Inside the evolute of the meridian ellipse (within about e^2 a = 42.7 km of the centre for WGS-84) the cubic has
/// three real roots; there the trigonometric form of its solution is used (s (2 + s) &lt; 0, |t| = 1).
/// Accuracy: round trips with <see cref="GeodeticToEcef"/> agree to better than 1e-8 m (a few units in the last place
/// of the ECEF coordinates) from 10 km below to 10,000 km above the ellipsoid at every latitude, poles included,
/// and inside the evolute (tests).
/// Degenerate inputs: on the polar axis (X = Y = 0) the longitude is returned as 0 and the latitude as +/- pi/2
/// exactly; at the centre of the earth (0, 0, 0) the result is latitude +pi/2, longitude 0, height -b (the poles
/// are the nearest surface points; the south pole is equally near). In the equatorial plane inside the evolute
/// (Z = 0, sqrt(X^2 + Y^2) &lt; e^2 a) the nearest surface points are off the equator; the northern one is returned.
/// NaN in any coordinate gives NaN outputs.
/// </remarks>
public static class EcefToGeodetic
{
    /// <summary>Converts ECEF coordinates to WGS-84 geodetic coordinates.</summary>
    /// <param name="p">ECEF coordinates, metres.</param>
    /// <returns>Geodetic point: latitude in [-pi/2, pi/2], longitude in [-pi, pi], radians; height, metres.</returns>
    public static GeodeticPoint Convert(EcefPoint p) => Convert(p, Ellipsoid.Wgs84);

    /// <summary>Converts ECEF coordinates to geodetic coordinates on the given oblate (or spherical) ellipsoid.</summary>
    /// <param name="p">ECEF coordinates, metres.</param>
    /// <param name="ellipsoid">Reference ellipsoid, 0 &lt;= f &lt; 1.</param>
    /// <returns>Geodetic point: latitude in [-pi/2, pi/2], longitude in [-pi, pi], radians; height, metres.</returns>
    public static GeodeticPoint Convert(EcefPoint p, Ellipsoid ellipsoid)
    {
        double a = ellipsoid.SemiMajorAxisM;
        double e2 = ellipsoid.FirstEccentricitySquared;
        double oneMinusE2 = 1.0 - e2;
        double e4 = e2 * e2;
        double rho = Math.Sqrt((p.XM * p.XM) + (p.YM * p.YM));
        double z = p.ZM;
        double lambda = rho == 0 ? 0.0 : Math.Atan2(p.YM, p.XM);

        if (rho == 0 && z == 0)
        {
            return new GeodeticPoint(Math.PI / 2, lambda, -ellipsoid.SemiMinorAxisM);
        }

        double pp = (rho / a) * (rho / a);
        double q = oneMinusE2 * (z / a) * (z / a);
        double r = (pp + q - e4) / 6.0;

        if (e4 * q == 0 && r <= 0)
        {
            return EquatorialPlaneInsideEvolute(pp, rho, lambda, a, e2, e4, oneMinusE2);
        }

        double u = CubicRoot(pp, q, r, e4);
        double v = Math.Sqrt((u * u) + (e4 * q));
        double uPlusV = u < 0 ? e4 * q / (v - u) : u + v;
        double w = Math.Max(0.0, e2 * (uPlusV - q) / (2.0 * v));
        double k = uPlusV / (Math.Sqrt(uPlusV + (w * w)) + w);
        double d = k * rho / (k + e2);
        double phi = Math.Atan2(z, d);
        double h = (k + e2 - 1.0) / k * Math.Sqrt((d * d) + (z * z));
        return new GeodeticPoint(phi, lambda, h);
    }

    /// <summary>Vermeille's u = r (1 + t + 1/t), computed as r + T + r^2 / T with T = r t.</summary>
    private static double CubicRoot(double pp, double q, double r, double e4)
    {
        double bigS = e4 * pp * q / 4.0;
        double r2 = r * r;
        double r3 = r * r2;
        double disc = bigS * ((2.0 * r3) + bigS);
        if (disc >= 0)
        {
            // The sign of the square root is chosen to maximise |T^3|; u does not depend on it.
            double t3 = bigS + r3;
            t3 += t3 < 0 ? -Math.Sqrt(disc) : Math.Sqrt(disc);
            double t = Math.Cbrt(t3);
            return r + t + (t != 0 ? r2 / t : 0.0);
        }

        // Three real roots (inside the evolute, r < 0): t = exp(i theta) and t + 1/t = 2 cos theta.
        double angle = Math.Atan2(Math.Sqrt(-disc), -(bigS + r3));
        return r + (2.0 * r * Math.Cos(angle / 3.0));
    }

    /// <summary>Z = 0 and rho &lt;= e^2 a: the normal through the point leaves the surface at
    /// tan^2 phi = (e^4 - p) / ((1 - e^2) p), with height -N (1 - e^2).</summary>
    private static GeodeticPoint EquatorialPlaneInsideEvolute(
        double pp, double rho, double lambda, double a, double e2, double e4, double oneMinusE2)
    {
        double phi = Math.Atan2(Math.Sqrt(Math.Max(0.0, (e4 - pp) / oneMinusE2)), rho / a);
        double sinPhi = Math.Sin(phi);
        double n = a / Math.Sqrt(1.0 - (e2 * sinPhi * sinPhi));
        return new GeodeticPoint(phi, lambda, -n * oneMinusE2);
    }
}
