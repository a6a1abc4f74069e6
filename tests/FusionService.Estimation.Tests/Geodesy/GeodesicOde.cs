using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests.Geodesy;

/// <summary>Independent geodesic reference: integrates the geodesic equation of the ellipsoid
/// F(x) = (x^2 + y^2) / a^2 + z^2 / b^2 - 1 = 0 in ECEF with classical Runge-Kutta (4th order), arc length as the
/// parameter: x'' = -(v' H v / |grad F|^2) grad F, i.e. the acceleration is along the surface normal only
/// (derived; textbook differential geometry). Uses no series and no spherical auxiliary.</summary>
internal static class GeodesicOde
{
    /// <summary>End point and arrival azimuth after travelling <paramref name="distanceM"/> from
    /// <paramref name="start"/> (height ignored) with initial azimuth <paramref name="azimuthRad"/>.</summary>
    public static (GeodeticPoint End, double AzimuthRad) Travel(
        GeodeticPoint start, double azimuthRad, double distanceM, Ellipsoid e, int steps)
    {
        EcefPoint p0 = GeodeticToEcef.Convert(start with { HeightM = 0 }, e);
        double[] x = { p0.XM, p0.YM, p0.ZM };
        double[] v = Direction(start.LatitudeRad, start.LongitudeRad, azimuthRad);
        double ia2 = 1.0 / (e.SemiMajorAxisM * e.SemiMajorAxisM);
        double ib2 = 1.0 / (e.SemiMinorAxisM * e.SemiMinorAxisM);
        double h = distanceM / steps;
        var state = new double[6] { x[0], x[1], x[2], v[0], v[1], v[2] };
        for (int i = 0; i < steps; i++)
        {
            double[] k1 = Derivative(state, ia2, ib2);
            double[] k2 = Derivative(Add(state, k1, h / 2), ia2, ib2);
            double[] k3 = Derivative(Add(state, k2, h / 2), ia2, ib2);
            double[] k4 = Derivative(Add(state, k3, h), ia2, ib2);
            for (int j = 0; j < 6; j++)
            {
                state[j] += h / 6 * (k1[j] + (2 * k2[j]) + (2 * k3[j]) + k4[j]);
            }
        }

        GeodeticPoint end = EcefToGeodetic.Convert(new EcefPoint(state[0], state[1], state[2]), e);
        (double sinLat, double cosLat) = Math.SinCos(end.LatitudeRad);
        (double sinLon, double cosLon) = Math.SinCos(end.LongitudeRad);
        double east = (-sinLon * state[3]) + (cosLon * state[4]);
        double north = (-sinLat * cosLon * state[3]) - (sinLat * sinLon * state[4]) + (cosLat * state[5]);
        return (end, Math.Atan2(east, north));
    }

    private static double[] Direction(double lat, double lon, double azimuth)
    {
        (double sinLat, double cosLat) = Math.SinCos(lat);
        (double sinLon, double cosLon) = Math.SinCos(lon);
        (double sinAz, double cosAz) = Math.SinCos(azimuth);
        return new[]
        {
            (sinAz * -sinLon) + (cosAz * -sinLat * cosLon),
            (sinAz * cosLon) + (cosAz * -sinLat * sinLon),
            cosAz * cosLat,
        };
    }

    private static double[] Derivative(double[] s, double ia2, double ib2)
    {
        double gx = s[0] * ia2;
        double gy = s[1] * ia2;
        double gz = s[2] * ib2;
        double curvature = (((s[3] * s[3]) + (s[4] * s[4])) * ia2) + (s[5] * s[5] * ib2);
        double scale = -curvature / ((gx * gx) + (gy * gy) + (gz * gz));
        return new[] { s[3], s[4], s[5], scale * gx, scale * gy, scale * gz };
    }

    private static double[] Add(double[] s, double[] k, double h)
    {
        var r = new double[6];
        for (int j = 0; j < 6; j++)
        {
            r[j] = s[j] + (h * k[j]);
        }

        return r;
    }
}
