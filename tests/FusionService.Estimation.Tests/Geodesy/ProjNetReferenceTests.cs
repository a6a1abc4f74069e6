using FusionService.Estimation.Geodesy;
using ProjNet.CoordinateSystems;
using ProjNet.CoordinateSystems.Transformations;
using Ellipsoid = FusionService.Estimation.Geodesy.Ellipsoid;

namespace FusionService.Estimation.Tests.Geodesy;

/// <summary>Geodetic &lt;-&gt; geocentric conversions against ProjNET 2.0.0, a general-purpose .NET projection library
/// (independent reference, test only), at seeded random points.</summary>
public sealed class ProjNetReferenceTests
{
    public static TheoryData<string> Ellipsoids => new() { "WGS-84", "Bessel 1841" };

    [Theory]
    [MemberData(nameof(Ellipsoids))]
    public void Forward_conversion_matches_ProjNet(string name)
    {
        (Ellipsoid ours, MathTransform toGeocentric) = Setup(name);
        foreach ((double latDeg, double lonDeg, double h) in RandomPoints(1))
        {
            EcefPoint actual = GeodeticToEcef.Convert(GeodeticPoint.FromDegrees(latDeg, lonDeg, h), ours);
            (double x, double y, double z) = toGeocentric.Transform(lonDeg, latDeg, h);
            AssertNear.Equal(x, actual.XM, 1e-6, "ECEF X (m)");
            AssertNear.Equal(y, actual.YM, 1e-6, "ECEF Y (m)");
            AssertNear.Equal(z, actual.ZM, 1e-6, "ECEF Z (m)");
        }
    }

    [Theory]
    [MemberData(nameof(Ellipsoids))]
    public void Reverse_conversion_recovers_input_from_ProjNet_geocentric_coordinates(string name)
    {
        (Ellipsoid ours, MathTransform toGeocentric) = Setup(name);
        foreach ((double latDeg, double lonDeg, double h) in RandomPoints(2))
        {
            (double x, double y, double z) = toGeocentric.Transform(lonDeg, latDeg, h);
            GeodeticPoint actual = EcefToGeodetic.Convert(new EcefPoint(x, y, z), ours);
            // 1e-8 m of arc on the earth is about 1.6e-15 rad: the resolution of double precision.
            AssertNear.Equal(Angles.DegreesToRadians(latDeg), actual.LatitudeRad, 2e-15, "latitude (rad)");
            AssertNear.EqualAngle(Angles.DegreesToRadians(lonDeg), actual.LongitudeRad, 2e-15 / Math.Cos(actual.LatitudeRad), "longitude (rad)");
            AssertNear.Equal(h, actual.HeightM, 1e-8, "height (m)");
        }
    }

    [Theory]
    [MemberData(nameof(Ellipsoids))]
    public void Reverse_conversion_matches_ProjNet_to_its_own_accuracy(string name)
    {
        // ProjNET's geocentric-to-geographic step is approximate: in this sample it disagrees with ProjNET's own
        // forward step by up to about 6 mm (seen while writing this test), so the comparison is at 1 cm.
        (Ellipsoid ours, MathTransform toGeocentric) = Setup(name);
        MathTransform toGeographic = toGeocentric.Inverse();
        foreach ((double latDeg, double lonDeg, double h) in RandomPoints(3))
        {
            EcefPoint ecef = GeodeticToEcef.Convert(GeodeticPoint.FromDegrees(latDeg, lonDeg, h), ours);
            GeodeticPoint actual = EcefToGeodetic.Convert(ecef, ours);
            (double lon, double lat, double height) = toGeographic.Transform(ecef.XM, ecef.YM, ecef.ZM);
            double metresPerRad = ours.SemiMajorAxisM;
            AssertNear.Equal(Angles.DegreesToRadians(lat) * metresPerRad, actual.LatitudeRad * metresPerRad, 1e-2, "latitude x a (m)");
            AssertNear.EqualAngle(Angles.DegreesToRadians(lon), actual.LongitudeRad, 1e-2 / metresPerRad / Math.Cos(actual.LatitudeRad), "longitude (rad)");
            AssertNear.Equal(height, actual.HeightM, 1e-2, "height (m)");
        }
    }

    private static (Ellipsoid Ours, MathTransform ToGeocentric) Setup(string name)
    {
        if (name == "WGS-84")
        {
            return (Ellipsoid.Wgs84, Transform(GeographicCoordinateSystem.WGS84, GeocentricCoordinateSystem.WGS84));
        }

        var factory = new CoordinateSystemFactory();
        var ellipsoid = factory.CreateFlattenedSphere("Bessel 1841", 6377397.155, 299.1528128, LinearUnit.Metre);
        var datum = factory.CreateHorizontalDatum("Bessel datum", DatumType.HD_Geocentric, ellipsoid, null);
        var geographic = factory.CreateGeographicCoordinateSystem(
            "Bessel geographic", AngularUnit.Degrees, datum, PrimeMeridian.Greenwich,
            new AxisInfo("Lon", AxisOrientationEnum.East), new AxisInfo("Lat", AxisOrientationEnum.North));
        var geocentric = factory.CreateGeocentricCoordinateSystem("Bessel geocentric", datum, LinearUnit.Metre, PrimeMeridian.Greenwich);
        return (Ellipsoid.Bessel1841, Transform(geographic, geocentric));
    }

    private static MathTransform Transform(CoordinateSystem from, CoordinateSystem to) =>
        new CoordinateTransformationFactory().CreateFromCoordinateSystems(from, to).MathTransform;

    private static IEnumerable<(double LatDeg, double LonDeg, double HeightM)> RandomPoints(int seed)
    {
        var rng = new Random(seed);
        for (int i = 0; i < 200; i++)
        {
            yield return ((rng.NextDouble() * 180) - 90, (rng.NextDouble() * 360) - 180, (rng.NextDouble() * 20500) - 500);
        }
    }
}
