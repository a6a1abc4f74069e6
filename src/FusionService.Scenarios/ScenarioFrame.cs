// Local east/north metres around an origin <-> latitude/longitude, for invented scenarios only.
using FusionService.Estimation.Geodesy;

namespace FusionService.Scenarios;

/// <summary>
/// Maps local east/north metres around an origin to geodetic latitude/longitude (degrees) and back, by scaling
/// with the WGS-84 meridian radius of curvature M and prime-vertical radius of curvature N at the origin
/// (an equirectangular projection about the origin): φ = φ₀ + north / M, λ = λ₀ + east / (N cos φ₀).
/// </summary>
/// <remarks>
/// M = a (1 - e²) / (1 - e² sin² φ₀)^(3/2), N = a / sqrt(1 - e² sin² φ₀) (WGS-84 a, e² from NIMA TR8350.2).
/// The two directions are exact inverses of each other (to rounding), so a scenario's truth and its fixes agree.
/// Compared with a true east-north-up tangent plane at the same origin the horizontal position differs at second
/// order in the distance d from the origin, because a parallel of latitude curves away from the east axis and the
/// meridians converge: on a sphere the difference is |E| |tan φ₀| sqrt(N² + E²/4) / R, at most 0.577 d² |tan φ₀| / R
/// (derived; checked against an exact ECEF-based ENU in the tests). At φ₀ = 45° that is 0.09 m at 1 km, 0.36 m at
/// 2 km, 9 m at 10 km and 36 m at 20 km. That is exact enough for invented scenarios within 20 km, but a filter test
/// that compares an ENU estimate with this frame's truth far from the origin sees that difference; keep such
/// scenarios within a few kilometres, or convert through latitude/longitude. Kept internal and isolated so it can
/// be replaced by the estimation core's local tangent plane.
/// Degenerate input: origins beyond ±80° latitude are rejected (cos φ₀ becomes small); longitudes are wrapped
/// to (-180, 180], so the antimeridian is crossed correctly.
/// </remarks>
internal readonly struct ScenarioFrame
{
    private const double MaxOriginLatitudeDeg = 80.0;

    public ScenarioFrame(double originLatitudeDeg, double originLongitudeDeg)
    {
        if (!double.IsFinite(originLatitudeDeg) || Math.Abs(originLatitudeDeg) > MaxOriginLatitudeDeg)
        {
            throw new ArgumentOutOfRangeException(nameof(originLatitudeDeg), originLatitudeDeg, "origin latitude must be finite and within [-80, 80] degrees");
        }

        if (!double.IsFinite(originLongitudeDeg) || Math.Abs(originLongitudeDeg) > 180.0)
        {
            throw new ArgumentOutOfRangeException(nameof(originLongitudeDeg), originLongitudeDeg, "origin longitude must be finite and within [-180, 180] degrees");
        }

        OriginLatitudeDeg = originLatitudeDeg;
        OriginLongitudeDeg = originLongitudeDeg;
        double phi = Angles.DegreesToRadians(originLatitudeDeg);
        double sin = Math.Sin(phi);
        double w2 = 1.0 - (Wgs84.FirstEccentricitySquared * sin * sin);
        MeridianRadiusM = Wgs84.SemiMajorAxisM * (1.0 - Wgs84.FirstEccentricitySquared) / (w2 * Math.Sqrt(w2));
        PrimeVerticalRadiusM = Wgs84.SemiMajorAxisM / Math.Sqrt(w2);
        ParallelRadiusM = PrimeVerticalRadiusM * Math.Cos(phi);
    }

    public double OriginLatitudeDeg { get; }

    public double OriginLongitudeDeg { get; }

    /// <summary>Meridian radius of curvature M at the origin, metres.</summary>
    public double MeridianRadiusM { get; }

    /// <summary>Prime-vertical radius of curvature N at the origin, metres.</summary>
    public double PrimeVerticalRadiusM { get; }

    /// <summary>Radius of the origin's parallel, N cos φ₀, metres.</summary>
    public double ParallelRadiusM { get; }

    public void ToGeodeticDeg(double eastM, double northM, out double latitudeDeg, out double longitudeDeg)
    {
        latitudeDeg = OriginLatitudeDeg + Angles.RadiansToDegrees(northM / MeridianRadiusM);
        longitudeDeg = WrapDeg180(OriginLongitudeDeg + Angles.RadiansToDegrees(eastM / ParallelRadiusM));
    }

    public void ToLocalM(double latitudeDeg, double longitudeDeg, out double eastM, out double northM)
    {
        northM = Angles.DegreesToRadians(latitudeDeg - OriginLatitudeDeg) * MeridianRadiusM;
        eastM = Angles.DegreesToRadians(WrapDeg180(longitudeDeg - OriginLongitudeDeg)) * ParallelRadiusM;
    }

    private static double WrapDeg180(double deg)
    {
        if (deg > -180.0 && deg <= 180.0)
        {
            return deg;
        }

        double wrapped = Math.IEEERemainder(deg, 360.0);
        return wrapped <= -180.0 ? wrapped + 360.0 : wrapped;
    }
}
