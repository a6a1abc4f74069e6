using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests.Geodesy;

/// <summary>ENU frame: exactness of the rotation (derived checks: round trips, length preservation, axis
/// directions) and its behaviour across the antimeridian and at the poles.</summary>
public sealed class LocalTangentPlaneTests
{
    // The brief asked for 1e-9 m; that is below what binary64 can carry through an ECEF round trip: one unit in the
    // last place of an ECEF coordinate is 0.93 nm, of a latitude near 1 rad 1.4 nm, and up to 4.8 nm was seen in
    // 20,000 random round trips. 10 nm keeps the check at the resolution of double precision.
    private const double RoundTripToleranceM = 1e-8;

    [Fact]
    public void Round_trips_within_50_km_of_random_anchors()
    {
        var rng = new Random(1234);
        for (int i = 0; i < 5000; i++)
        {
            var anchor = GeodeticPoint.FromDegrees((rng.NextDouble() * 180) - 90, (rng.NextDouble() * 360) - 180, (rng.NextDouble() * 3000) - 100);
            AssertRoundTripsAround(anchor, rng, 50000.0);
        }
    }

    [Theory]
    [InlineData(90.0, 0.0)]
    [InlineData(90.0, 123.0)]
    [InlineData(-90.0, 0.0)]
    [InlineData(-90.0, -45.0)]
    [InlineData(89.99, 10.0)]
    public void Round_trips_at_and_near_the_poles(double latDeg, double lonDeg)
    {
        var rng = new Random(99);
        var anchor = GeodeticPoint.FromDegrees(latDeg, lonDeg, 30.0);
        for (int i = 0; i < 500; i++)
        {
            AssertRoundTripsAround(anchor, rng, 50000.0);
        }
    }

    [Fact]
    public void Anchor_maps_to_origin_and_height_to_up()
    {
        var anchor = GeodeticPoint.FromDegrees(48.1, 11.6, 520.0);
        var plane = new LocalTangentPlane(anchor);
        Assert.Equal(anchor, plane.Anchor);
        EnuPoint origin = plane.ToEnu(anchor);
        AssertNear.Equal(0.0, Math.Abs(origin.EastM) + Math.Abs(origin.NorthM) + Math.Abs(origin.UpM), 1e-9, "anchor ENU (m)");
        EnuPoint above = plane.ToEnu(anchor with { HeightM = 530.0 });
        AssertNear.Equal(10.0, above.UpM, 1e-8, "Up of a point 10 m above the anchor (m)");
        AssertNear.Equal(0.0, above.EastM, 1e-8, "East of a point above the anchor (m)");
        AssertNear.Equal(0.0, above.NorthM, 1e-8, "North of a point above the anchor (m)");
    }

    [Fact]
    public void Axes_point_east_and_north_and_preserve_length()
    {
        var anchor = GeodeticPoint.FromDegrees(-33.9, 151.2, 40.0);
        var plane = new LocalTangentPlane(anchor);
        EnuPoint north = plane.ToEnu(anchor with { LatitudeRad = anchor.LatitudeRad + 1e-4 });
        Assert.True(north.NorthM > 600, "a point 1e-4 rad further north lies north");
        AssertNear.Equal(0.0, north.EastM, 1e-8, "East of a point on the same meridian (m)");
        EnuPoint east = plane.ToEnu(anchor with { LongitudeRad = anchor.LongitudeRad + 1e-4 });
        Assert.True(east.EastM > 500, "a point 1e-4 rad further east lies east");
        Assert.True(east.NorthM < 0, "in the southern hemisphere a parallel lies poleward (south) of the east axis");

        // The rotation keeps lengths: |ENU| = |ECEF(p) - ECEF(anchor)|.
        var p = GeodeticPoint.FromDegrees(-33.7, 150.9, 900.0);
        EnuPoint enu = plane.ToEnu(p);
        EcefPoint a = GeodeticToEcef.Convert(anchor);
        EcefPoint b = GeodeticToEcef.Convert(p);
        double chord = Math.Sqrt(Sq(b.XM - a.XM) + Sq(b.YM - a.YM) + Sq(b.ZM - a.ZM));
        AssertNear.Equal(chord, Math.Sqrt(Sq(enu.EastM) + Sq(enu.NorthM) + Sq(enu.UpM)), 1e-8, "ENU length (m)");
    }

    [Fact]
    public void Across_the_antimeridian_east_is_small_and_continuous()
    {
        var anchor = GeodeticPoint.FromDegrees(-16.5, 179.9);
        var plane = new LocalTangentPlane(anchor);
        double previousEast = double.NegativeInfinity;
        foreach (double lonDeg in new[] { 179.8, 179.9, 179.95, 180.0, -179.95, -179.9, -179.8 })
        {
            var p = GeodeticPoint.FromDegrees(-16.5, lonDeg);
            EnuPoint enu = plane.ToEnu(p);
            Assert.True(enu.EastM > previousEast, $"East must increase through the antimeridian (lon {lonDeg})");
            Assert.True(Math.Abs(enu.EastM) < 35000, "points within 0.3 deg stay within 35 km");
            previousEast = enu.EastM;

            // The same point given with longitude + 360 deg is the same point.
            EnuPoint unwrapped = plane.ToEnu(p with { LongitudeRad = p.LongitudeRad + (2 * Math.PI) });
            AssertNear.Equal(enu.EastM, unwrapped.EastM, 1e-8, "East with longitude + 2 pi (m)");

            // The horizontal length agrees with the geodesic distance (short line: relative error < 1e-5).
            double geodesic = VincentyInverse.Compute(anchor, p).DistanceM;
            AssertNear.Equal(geodesic, Math.Sqrt(Sq(enu.EastM) + Sq(enu.NorthM)), 1e-5 * geodesic, "horizontal distance (m)");

            GeodeticPoint back = plane.ToGeodetic(enu);
            AssertNear.EqualAngle(p.LongitudeRad, back.LongitudeRad, 1e-14, "longitude after round trip (rad)");
            Assert.True(back.LongitudeRad > -Math.PI && back.LongitudeRad <= Math.PI);
        }
    }

    [Theory]
    [InlineData(90.0, 0.0)]
    [InlineData(90.0, 70.0)]
    [InlineData(-90.0, 0.0)]
    [InlineData(-90.0, -120.0)]
    [InlineData(45.0, 10.0)]
    public void Bearing_in_the_plane_matches_geodesic_azimuth_with_the_same_pole_convention(double latDeg, double lonDeg)
    {
        // Near the anchor atan2(East, North) is the geodesic azimuth (azimuthal projection); at the poles both follow
        // the anchor's given meridian. A 5 km line on the ellipsoid bends from the plane bearing by about
        // e^2 (d / a) rad or less.
        var anchor = GeodeticPoint.FromDegrees(latDeg, lonDeg);
        var plane = new LocalTangentPlane(anchor);
        double toleranceRad = Wgs84.FirstEccentricitySquared * 5000.0 / Wgs84.SemiMajorAxisM;
        for (int k = 0; k < 12; k++)
        {
            double bearing = k * Math.PI / 6;
            GeodeticPoint p = plane.ToGeodetic(new EnuPoint(5000 * Math.Sin(bearing), 5000 * Math.Cos(bearing))) with { HeightM = 0 };
            EnuPoint enu = plane.ToEnu(p);
            double azimuth = VincentyInverse.Compute(anchor, p).InitialAzimuthRad;
            AssertNear.EqualAngle(Math.Atan2(enu.EastM, enu.NorthM), azimuth, toleranceRad, "azimuth vs plane bearing (rad)");
        }
    }

    [Fact]
    public void North_axis_at_the_poles_follows_the_anchor_meridian()
    {
        // Documented convention: at the north pole North points down the meridian of longitude + pi,
        // at the south pole up the anchor's own meridian.
        var northPole = new LocalTangentPlane(GeodeticPoint.FromDegrees(90, 0));
        EnuPoint onMeridian180 = northPole.ToEnu(GeodeticPoint.FromDegrees(89.9, 180));
        Assert.True(onMeridian180.NorthM > 11000);
        AssertNear.Equal(0.0, onMeridian180.EastM, 1e-6, "East of a point on meridian 180 (m)");
        EnuPoint onMeridian90E = northPole.ToEnu(GeodeticPoint.FromDegrees(89.9, 90));
        Assert.True(onMeridian90E.EastM > 11000);

        var southPole = new LocalTangentPlane(GeodeticPoint.FromDegrees(-90, 0));
        EnuPoint onMeridian0 = southPole.ToEnu(GeodeticPoint.FromDegrees(-89.9, 0));
        Assert.True(onMeridian0.NorthM > 11000);
        AssertNear.Equal(0.0, onMeridian0.EastM, 1e-6, "East of a point on meridian 0 (m)");
    }

    [Theory]
    [InlineData(double.NaN, 0.0, 0.0)]
    [InlineData(0.0, double.PositiveInfinity, 0.0)]
    [InlineData(0.0, 0.0, double.NaN)]
    [InlineData(1.6, 0.0, 0.0)]
    public void Constructor_rejects_invalid_anchor(double latRad, double lonRad, double h) =>
        Assert.Throws<ArgumentOutOfRangeException>(() => new LocalTangentPlane(new GeodeticPoint(latRad, lonRad, h)));

    private static void AssertRoundTripsAround(GeodeticPoint anchor, Random rng, double radiusM)
    {
        var plane = new LocalTangentPlane(anchor);
        double r = radiusM * Math.Sqrt(rng.NextDouble());
        double theta = rng.NextDouble() * 2 * Math.PI;
        var offset = new EnuPoint(r * Math.Sin(theta), r * Math.Cos(theta), (rng.NextDouble() * 1100) - 100);

        // Geodetic -> ENU -> geodetic, compared in metres along the meridian, the parallel and the normal.
        GeodeticPoint p = plane.ToGeodetic(offset);
        GeodeticPoint back = plane.ToGeodetic(plane.ToEnu(p));
        double radius = Wgs84.SemiMajorAxisM + p.HeightM;
        AssertNear.Equal(0.0, (back.LatitudeRad - p.LatitudeRad) * radius, RoundTripToleranceM, "north round-trip error (m)");
        AssertNear.Equal(0.0, Angles.WrapPi(back.LongitudeRad - p.LongitudeRad) * radius * Math.Cos(p.LatitudeRad), RoundTripToleranceM, "east round-trip error (m)");
        AssertNear.Equal(p.HeightM, back.HeightM, RoundTripToleranceM, "height (m)");

        // ENU -> geodetic -> ENU.
        EnuPoint again = plane.ToEnu(p);
        AssertNear.Equal(offset.EastM, again.EastM, RoundTripToleranceM, "East (m)");
        AssertNear.Equal(offset.NorthM, again.NorthM, RoundTripToleranceM, "North (m)");
        AssertNear.Equal(offset.UpM, again.UpM, RoundTripToleranceM, "Up (m)");
    }

    private static double Sq(double x) => x * x;
}
