namespace FusionService.Estimation.Geodesy;

/// <summary>Inverse geodesic problem solved for the initial azimuth by bisection; the fallback of
/// <see cref="VincentyInverse"/> where Vincenty's lambda iteration fails (nearly antipodal points).</summary>
/// <remarks>
/// Formulation of C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87(1):43-55, 2013 (inverse problem):
/// swap and mirror the points so that beta1 &lt;= 0, |beta2| &lt;= |beta1| and 0 &lt;= L &lt;= pi. A geodesic leaving
/// point 1 with azimuth alpha1 in [0, pi] first reaches latitude beta2 heading north (cos alpha2 &gt;= 0); the
/// longitude difference lambda12(alpha1) gained by then rises from 0 (alpha1 = 0, due north) to pi (alpha1 = pi,
/// over the south pole), continuously and monotonically (also checked numerically while writing this code), so
/// lambda12(alpha1) = L has one root and bisection finds it. Only when beta1 = 0 exactly (then beta2 = 0 too) is
/// the search limited to [pi/2, pi], and lines short enough for the equator itself are answered directly.
/// Clairaut's relation gives alpha0 and alpha2, spherical trigonometry sigma and omega, and Vincenty's (1975)
/// series the longitude and distance corrections.
/// </remarks>
internal static class AzimuthSearchInverse
{
    private const int BisectionSteps = 64;

    internal static GeodesicInverseResult Compute(GeodeticPoint p1, GeodeticPoint p2, Ellipsoid e)
    {
        double f = e.Flattening;
        double bigL = Angles.WrapPi(p2.LongitudeRad - p1.LongitudeRad);
        double lat1 = p1.LatitudeRad;
        double lat2 = p2.LatitudeRad;

        bool swapped = Math.Abs(lat1) < Math.Abs(lat2);
        if (swapped)
        {
            (lat1, lat2) = (lat2, lat1);
            bigL = -bigL;
        }

        bool mirroredLongitude = bigL < 0;
        bigL = Math.Abs(bigL);
        bool mirroredLatitude = lat1 > 0;
        if (mirroredLatitude)
        {
            lat1 = -lat1;
            lat2 = -lat2;
        }

        (double sinB1, double cosB1) = VincentySeries.ReducedLatitude(lat1, f);
        (double sinB2, double cosB2) = VincentySeries.ReducedLatitude(lat2, f);

        Line line;
        if (sinB1 == 0 && bigL <= (1.0 - f) * Math.PI)
        {
            // Both on the equator (|beta2| <= |beta1| = 0) and close enough for the equator itself to be shortest.
            line = new Line(e.SemiMajorAxisM * bigL, Math.PI / 2, Math.PI / 2);
        }
        else
        {
            // From the equator a geodesic must leave southwards to meet the equator again heading north.
            double lo = sinB1 == 0 ? Math.PI / 2 : 0.0;
            double hi = Math.PI;
            for (int i = 0; i < BisectionSteps; i++)
            {
                double mid = 0.5 * (lo + hi);
                if (Solve(mid, sinB1, cosB1, sinB2, cosB2, e).LongitudeRad < bigL)
                {
                    lo = mid;
                }
                else
                {
                    hi = mid;
                }
            }

            line = Solve(0.5 * (lo + hi), sinB1, cosB1, sinB2, cosB2, e);
        }

        double alpha1 = line.Alpha1Rad;
        double alpha2 = line.Alpha2Rad;
        if (mirroredLatitude)
        {
            alpha1 = Math.PI - alpha1;
            alpha2 = Math.PI - alpha2;
        }

        if (mirroredLongitude)
        {
            alpha1 = -alpha1;
            alpha2 = -alpha2;
        }

        if (swapped)
        {
            (alpha1, alpha2) = (alpha2 + Math.PI, alpha1 + Math.PI);
        }

        return new GeodesicInverseResult(line.DistanceM, Angles.WrapPi(alpha1), Angles.WrapPi(alpha2));
    }

    /// <summary>Follows the geodesic leaving beta1 with azimuth alpha1 to its first northward crossing of beta2.</summary>
    private static Line Solve(double alpha1, double sinB1, double cosB1, double sinB2, double cosB2, Ellipsoid e)
    {
        (double sinA1, double cosA1) = Math.SinCos(alpha1);
        double sinA0 = sinA1 * cosB1;
        double cosSqA0 = 1.0 - (sinA0 * sinA0);

        // cos(alpha2) from Clairaut, with cos^2 beta2 - cos^2 beta1 written to avoid cancellation near the poles.
        double dCosSq = cosB1 < -sinB1
            ? (cosB2 - cosB1) * (cosB2 + cosB1)
            : (sinB1 - sinB2) * (sinB1 + sinB2);
        double cosA2 = Math.Sqrt(Math.Max(0.0, (cosA1 * cosB1 * cosA1 * cosB1) + dCosSq)) / cosB2;
        double sinA2 = sinA0 / cosB2;

        // Arc (sigma) and auxiliary longitude (omega) from the equator crossing, as unit vectors.
        (double sinS1, double cosS1) = Unit(sinB1, cosA1 * cosB1);
        (double sinS2, double cosS2) = Unit(sinB2, cosA2 * cosB2);
        (double sinW1, double cosW1) = Unit(sinA0 * sinB1, cosA1 * cosB1);
        (double sinW2, double cosW2) = Unit(sinA0 * sinB2, cosA2 * cosB2);

        double sinS12 = Math.Max(0.0, (cosS1 * sinS2) - (sinS1 * cosS2));
        double cosS12 = (cosS1 * cosS2) + (sinS1 * sinS2);
        double sigma12 = Math.Atan2(sinS12, cosS12);
        double omega12 = Math.Atan2(Math.Max(0.0, (cosW1 * sinW2) - (sinW1 * cosW2)), (cosW1 * cosW2) + (sinW1 * sinW2));

        // cos(2 sigma_m) = cos(sigma1 + sigma2).
        double cos2SigmaM = (cosS1 * cosS2) - (sinS1 * sinS2);
        double f = e.Flattening;
        double lambda12 = omega12 - VincentySeries.LongitudeExcess(f, sinA0, cosSqA0, sigma12, sinS12, cosS12, cos2SigmaM);
        double s = VincentySeries.Distance(e, cosSqA0, sigma12, sinS12, cosS12, cos2SigmaM);
        return new Line(s, alpha1, Math.Atan2(sinA2, cosA2), lambda12);
    }

    private static (double Sin, double Cos) Unit(double y, double x)
    {
        double r = Math.Sqrt((x * x) + (y * y));
        return r == 0 ? (0.0, 1.0) : (y / r, x / r);
    }

    private readonly record struct Line(double DistanceM, double Alpha1Rad, double Alpha2Rad, double LongitudeRad = 0);
}
