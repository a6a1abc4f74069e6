// Local east/north metres around an origin <-> latitude/longitude, for invented scenarios only.
using FusionService.Estimation.Geodesy;

namespace FusionService.Scenarios;

/// <summary>
/// Maps local east/north metres around an origin to geodetic latitude/longitude (degrees) and back through the
/// estimation core's exact <see cref="LocalTangentPlane"/>, the same way the filter does: a plane point (e, n) is taken
/// at the plane's up coordinate -(e² + n²) / (2a), which lies on the ellipsoid to second order, and a geodetic point is
/// projected to the plane with its up coordinate dropped. Scenario truth and filter estimates therefore share one
/// metric: distances in the scenario are distances the filter measures.
/// Degenerate input: origins beyond ±80° latitude are rejected; longitudes are wrapped to (-180, 180].
/// </summary>
internal readonly struct ScenarioFrame
{
    private const double MaxOriginLatitudeDeg = 80.0;
    private readonly LocalTangentPlane _plane;

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
        _plane = new LocalTangentPlane(GeodeticPoint.FromDegrees(originLatitudeDeg, originLongitudeDeg));
    }

    public double OriginLatitudeDeg { get; }

    public double OriginLongitudeDeg { get; }

    public void ToGeodeticDeg(double eastM, double northM, out double latitudeDeg, out double longitudeDeg)
    {
        double upM = -((eastM * eastM) + (northM * northM)) / (2.0 * Wgs84.SemiMajorAxisM);
        GeodeticPoint p = _plane.ToGeodetic(new EnuPoint(eastM, northM, upM));
        latitudeDeg = p.LatitudeDeg;
        longitudeDeg = p.LongitudeDeg;
    }

    public void ToLocalM(double latitudeDeg, double longitudeDeg, out double eastM, out double northM)
    {
        EnuPoint enu = _plane.ToEnu(GeodeticPoint.FromDegrees(latitudeDeg, longitudeDeg));
        eastM = enu.EastM;
        northM = enu.NorthM;
    }
}
