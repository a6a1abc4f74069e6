namespace FusionService.Estimation.Geodesy;

/// <summary>Inverse geodesic problem (distance and azimuths between two points) on an ellipsoid.</summary>
/// <remarks>
/// Method: T. Vincenty, "Direct and inverse solutions of geodesics on the ellipsoid with application of nested
/// equations", Survey Review 23(176):88-93, 1975: iterate the auxiliary-sphere longitude lambda from lambda = L
/// until it changes by less than 1e-12 rad, then s = b A (sigma - delta sigma). The series are good to a fraction
/// of a millimetre on terrestrial ellipsoids (tests: published examples to 1 mm, integrated geodesics to 1 mm).
/// The iteration fails for nearly antipodal points (and for points on the equator more than (1 - f) pi apart in
/// longitude); <see cref="TryCompute"/> then returns false and
/// <see cref="Compute(GeodeticPoint, GeodeticPoint, Ellipsoid)"/> falls back to solving for the initial azimuth
/// by bisection, after C. F. F. Karney, "Algorithms for geodesics", Journal of Geodesy 87(1):43-55, 2013 (its
/// inverse-problem formulation), with Vincenty's series for the longitude and distance; that converges everywhere.
/// Conventions (see <see cref="GeodesicInverseResult"/>): azimuths clockwise from north in (-pi, pi]; heights are
/// ignored (the line is on the ellipsoid surface). Coincident points give distance 0 and both azimuths 0.
/// At a pole the azimuth is the limit for a point approaching the pole along the meridian of its given
/// longitude (e.g. leaving the north pole given at longitude 0 towards longitude 90 deg E has azimuth 90 deg);
/// the distance does not depend on the longitude given to a pole. For exactly antipodal points several geodesics
/// are equally short; one of them is returned (for two points on the equator, one through a pole).
/// Invalid input (NaN or infinite coordinates, or a latitude outside [-pi/2, pi/2]): TryCompute returns false and
/// Compute returns NaN in all three fields.
/// </remarks>
public static class VincentyInverse
{
    private const int MaxIterations = 200;
    private const double LambdaToleranceRad = 1e-12;

    /// <summary>Solves the inverse problem on WGS-84; never fails for valid input.</summary>
    /// <param name="p1">First point (radians; height ignored).</param>
    /// <param name="p2">Second point (radians; height ignored).</param>
    /// <returns>Distance, metres, and initial and final azimuths, radians.</returns>
    public static GeodesicInverseResult Compute(GeodeticPoint p1, GeodeticPoint p2) => Compute(p1, p2, Ellipsoid.Wgs84);

    /// <summary>Solves the inverse problem on the given ellipsoid; never fails for valid input.</summary>
    /// <param name="p1">First point (radians; height ignored).</param>
    /// <param name="p2">Second point (radians; height ignored).</param>
    /// <param name="ellipsoid">Oblate or spherical reference ellipsoid.</param>
    /// <returns>Distance, metres, and initial and final azimuths, radians.</returns>
    public static GeodesicInverseResult Compute(GeodeticPoint p1, GeodeticPoint p2, Ellipsoid ellipsoid)
    {
        if (TryCompute(p1, p2, ellipsoid, out GeodesicInverseResult result))
        {
            return result;
        }

        return IsValid(p1) && IsValid(p2)
            ? AzimuthSearchInverse.Compute(p1, p2, ellipsoid)
            : new GeodesicInverseResult(double.NaN, double.NaN, double.NaN);
    }

    /// <summary>Runs Vincenty's iteration alone.</summary>
    /// <param name="p1">First point (radians; height ignored).</param>
    /// <param name="p2">Second point (radians; height ignored).</param>
    /// <param name="e">Oblate or spherical reference ellipsoid.</param>
    /// <param name="result">The solution when the method returns true; default otherwise.</param>
    /// <returns>False when the lambda iteration does not converge within 200 steps, leaves [-pi, pi], meets
    /// exactly antipodal points, or the input is invalid (not finite, or |latitude| &gt; pi/2).</returns>
    public static bool TryCompute(GeodeticPoint p1, GeodeticPoint p2, Ellipsoid e, out GeodesicInverseResult result)
    {
        result = default;
        if (!IsValid(p1) || !IsValid(p2))
        {
            return false;
        }

        double f = e.Flattening;
        double bigL = Angles.WrapPi(p2.LongitudeRad - p1.LongitudeRad);
        (double sinU1, double cosU1) = VincentySeries.ReducedLatitude(p1.LatitudeRad, f);
        (double sinU2, double cosU2) = VincentySeries.ReducedLatitude(p2.LatitudeRad, f);

        double lambda = bigL;
        for (int i = 0; i < MaxIterations; i++)
        {
            (double sinLambda, double cosLambda) = Math.SinCos(lambda);
            double t1 = cosU2 * sinLambda;
            double t2 = (cosU1 * sinU2) - (sinU1 * cosU2 * cosLambda);
            double sinSigma = Math.Sqrt((t1 * t1) + (t2 * t2));
            double cosSigma = (sinU1 * sinU2) + (cosU1 * cosU2 * cosLambda);
            if (sinSigma == 0)
            {
                if (cosSigma > 0)
                {
                    result = new GeodesicInverseResult(0.0, 0.0, 0.0);
                    return true;
                }

                return false;
            }

            double sigma = Math.Atan2(sinSigma, cosSigma);
            double sinAlpha = cosU1 * cosU2 * sinLambda / sinSigma;
            double cosSqAlpha = 1.0 - (sinAlpha * sinAlpha);
            // On the equator (cos^2 alpha = 0) the midpoint term is 0 by continuity.
            double cos2SigmaM = cosSqAlpha != 0 ? cosSigma - (2.0 * sinU1 * sinU2 / cosSqAlpha) : 0.0;
            double next = bigL + VincentySeries.LongitudeExcess(f, sinAlpha, cosSqAlpha, sigma, sinSigma, cosSigma, cos2SigmaM);
            if (!(Math.Abs(next) <= Math.PI))
            {
                return false;
            }

            bool converged = Math.Abs(next - lambda) <= LambdaToleranceRad;
            lambda = next;
            if (converged)
            {
                result = Finish(e, lambda, sinU1, cosU1, sinU2, cosU2);
                return true;
            }
        }

        return false;
    }

    private static GeodesicInverseResult Finish(
        Ellipsoid e, double lambda, double sinU1, double cosU1, double sinU2, double cosU2)
    {
        (double sinLambda, double cosLambda) = Math.SinCos(lambda);
        double t1 = cosU2 * sinLambda;
        double t2 = (cosU1 * sinU2) - (sinU1 * cosU2 * cosLambda);
        double sinSigma = Math.Sqrt((t1 * t1) + (t2 * t2));
        double cosSigma = (sinU1 * sinU2) + (cosU1 * cosU2 * cosLambda);
        double sigma = Math.Atan2(sinSigma, cosSigma);
        double sinAlpha = cosU1 * cosU2 * sinLambda / sinSigma;
        double cosSqAlpha = 1.0 - (sinAlpha * sinAlpha);
        double cos2SigmaM = cosSqAlpha != 0 ? cosSigma - (2.0 * sinU1 * sinU2 / cosSqAlpha) : 0.0;
        double s = VincentySeries.Distance(e, cosSqAlpha, sigma, sinSigma, cosSigma, cos2SigmaM);
        double alpha1 = Math.Atan2(t1, t2);
        double alpha2 = Math.Atan2(cosU1 * sinLambda, (-sinU1 * cosU2) + (cosU1 * sinU2 * cosLambda));
        return new GeodesicInverseResult(s, Angles.WrapPi(alpha1), Angles.WrapPi(alpha2));
    }

    private static bool IsValid(GeodeticPoint p) =>
        Math.Abs(p.LatitudeRad) <= Math.PI / 2 && double.IsFinite(p.LongitudeRad);
}
