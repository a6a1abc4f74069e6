using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests.Geodesy;

/// <summary>EPSG Guidance Note 7-2, method 9602 (geographic/geocentric conversions) worked example on WGS-84:
/// 53 deg 48' 33.820" N, 2 deg 07' 46.380" E, h = 73.000 m -> X = 3771793.968, Y = 140253.342, Z = 5124304.349 m
/// (published; input digits from memory).</summary>
public sealed class GeodeticToEcefTests
{
    private static readonly GeodeticPoint EpsgPoint = GeodeticPoint.FromDegrees(
        Angles.FromDms(53, 48, 33.820, false), Angles.FromDms(2, 7, 46.380, false), 73.000);

    private static readonly EcefPoint EpsgEcef = new(3771793.968, 140253.342, 5124304.349);

    [Fact]
    public void Epsg_9602_forward_example()
    {
        EcefPoint actual = GeodeticToEcef.Convert(EpsgPoint);
        AssertNear.Equal(EpsgEcef.XM, actual.XM, 1e-3, "ECEF X (m)");
        AssertNear.Equal(EpsgEcef.YM, actual.YM, 1e-3, "ECEF Y (m)");
        AssertNear.Equal(EpsgEcef.ZM, actual.ZM, 1e-3, "ECEF Z (m)");
    }

    [Fact]
    public void Epsg_9602_reverse_of_published_coordinates_gives_published_input()
    {
        // The published X, Y, Z are rounded to 1 mm, so the reverse is checked at the example's own precision:
        // 0.001" (about 3 cm) in angle and 1 mm in height.
        GeodeticPoint actual = EcefToGeodetic.Convert(EpsgEcef);
        double arcsecRad = Angles.DegreesToRadians(1.0 / 3600);
        AssertNear.Equal(EpsgPoint.LatitudeRad, actual.LatitudeRad, 0.001 * arcsecRad, "latitude (rad)");
        AssertNear.Equal(EpsgPoint.LongitudeRad, actual.LongitudeRad, 0.001 * arcsecRad, "longitude (rad)");
        AssertNear.Equal(73.000, actual.HeightM, 1e-3, "ellipsoidal height (m)");
    }

    [Fact]
    public void Epsg_9602_round_trip()
    {
        // Derived: forward then reverse must return the input to 1e-9 deg and 1 mm.
        GeodeticPoint back = EcefToGeodetic.Convert(GeodeticToEcef.Convert(EpsgPoint));
        AssertNear.Equal(EpsgPoint.LatitudeDeg, back.LatitudeDeg, 1e-9, "latitude (deg)");
        AssertNear.Equal(EpsgPoint.LongitudeDeg, back.LongitudeDeg, 1e-9, "longitude (deg)");
        AssertNear.Equal(EpsgPoint.HeightM, back.HeightM, 1e-3, "ellipsoidal height (m)");
    }

    [Fact]
    public void Poles_and_equator_have_closed_form_coordinates()
    {
        // Derived from method 9602: at the poles N = a / sqrt(1 - e^2), so Z = +/-(b + h); on the equator X = a + h.
        EcefPoint north = GeodeticToEcef.Convert(new GeodeticPoint(Math.PI / 2, 1.0, 100.0));
        AssertNear.Equal(Wgs84.SemiMinorAxisM + 100.0, north.ZM, 1e-8, "north pole Z (m)");
        AssertNear.Equal(0.0, Math.Sqrt((north.XM * north.XM) + (north.YM * north.YM)), 1e-8, "north pole distance from axis (m)");
        EcefPoint south = GeodeticToEcef.Convert(new GeodeticPoint(-Math.PI / 2, 0.0));
        AssertNear.Equal(-Wgs84.SemiMinorAxisM, south.ZM, 1e-8, "south pole Z (m)");
        EcefPoint equator = GeodeticToEcef.Convert(GeodeticPoint.FromDegrees(0, 90, -50.0));
        AssertNear.Equal(Wgs84.SemiMajorAxisM - 50.0, equator.YM, 1e-8, "equator 90E Y (m)");
        AssertNear.Equal(0.0, equator.XM, 1e-8, "equator 90E X (m)");
    }

    [Fact]
    public void NaN_input_gives_NaN_output()
    {
        EcefPoint p = GeodeticToEcef.Convert(new GeodeticPoint(double.NaN, 0.0));
        Assert.True(double.IsNaN(p.XM) && double.IsNaN(p.YM) && double.IsNaN(p.ZM));
    }
}
