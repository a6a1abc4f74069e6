namespace FusionService.Estimation.Geodesy;

/// <summary>Geodetic (latitude, longitude, height) to earth-centred, earth-fixed coordinates.</summary>
/// <remarks>EPSG Guidance Note 7-2, method 9602: with N = a / sqrt(1 - e^2 sin^2 phi),
/// X = (N + h) cos phi cos lambda, Y = (N + h) cos phi sin lambda, Z = (N (1 - e^2) + h) sin phi.
/// Exact (closed form); defined everywhere including the poles. NaN in any input gives NaN outputs.</remarks>
public static class GeodeticToEcef
{
    /// <summary>Converts a WGS-84 geodetic point to ECEF.</summary>
    /// <param name="p">Geodetic point (radians, metres).</param>
    /// <returns>ECEF coordinates, metres.</returns>
    public static EcefPoint Convert(GeodeticPoint p) => Convert(p, Ellipsoid.Wgs84);

    /// <summary>Converts a geodetic point on the given ellipsoid to ECEF.</summary>
    /// <param name="p">Geodetic point (radians, metres).</param>
    /// <param name="ellipsoid">Reference ellipsoid.</param>
    /// <returns>ECEF coordinates, metres.</returns>
    public static EcefPoint Convert(GeodeticPoint p, Ellipsoid ellipsoid)
    {
        double e2 = ellipsoid.FirstEccentricitySquared;
        (double sinPhi, double cosPhi) = Math.SinCos(p.LatitudeRad);
        (double sinLambda, double cosLambda) = Math.SinCos(p.LongitudeRad);
        double n = ellipsoid.SemiMajorAxisM / Math.Sqrt(1.0 - (e2 * sinPhi * sinPhi));
        double horizontal = (n + p.HeightM) * cosPhi;
        return new EcefPoint(
            horizontal * cosLambda,
            horizontal * sinLambda,
            ((n * (1.0 - e2)) + p.HeightM) * sinPhi);
    }
}
