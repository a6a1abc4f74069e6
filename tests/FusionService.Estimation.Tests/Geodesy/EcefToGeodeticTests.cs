using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests.Geodesy;

/// <summary>Closed-form ECEF to geodetic conversion (Vermeille 2002). Checks are derived: round trips through the
/// exact forward formula of EPSG method 9602, and closed-form special cases.</summary>
public sealed class EcefToGeodeticTests
{
    // One unit in the last place of an ECEF coordinate is 0.93 nm at the earth's surface and 3.7 nm at 10,000 km
    // height; a round trip rounds several times, so 10 nm is the resolution of double precision here, and far
    // inside the 0.1 mm the estimation core requires.
    private const double RoundTripToleranceM = 1e-8;

    public static TheoryData<double> Heights => new() { -10000.0, -100.0, 0.0, 73.0, 1000.0, 1e5, 1e7 };

    [Theory]
    [MemberData(nameof(Heights))]
    public void Round_trip_at_every_latitude_including_the_poles(double heightM)
    {
        foreach (Ellipsoid e in new[] { Ellipsoid.Wgs84, Ellipsoid.Bessel1841 })
        {
            for (int i = -3600; i <= 3600; i++)
            {
                double lat = Angles.DegreesToRadians(i / 40.0);
                var p = new GeodeticPoint(lat, Angles.DegreesToRadians((i * 7.3) % 360.0), heightM);
                AssertRoundTrip(p, e);
            }

            foreach (double lat in new[] { Math.PI / 2, -Math.PI / 2, Math.BitDecrement(Math.PI / 2), (Math.PI / 2) - 1e-10, 1e-12, -1e-300 })
            {
                AssertRoundTrip(new GeodeticPoint(lat, -2.5, heightM), e);
            }
        }
    }

    [Fact]
    public void Round_trip_on_a_sphere()
    {
        Ellipsoid sphere = Ellipsoid.FromInverseFlattening(6371000.0, double.PositiveInfinity);
        AssertRoundTrip(GeodeticPoint.FromDegrees(45, 10, 500), sphere);
        AssertRoundTrip(GeodeticPoint.FromDegrees(-90, 0, 0), sphere);
        AssertRoundTrip(GeodeticPoint.FromDegrees(0, -170, -3000), sphere);
    }

    [Fact]
    public void Ecef_round_trip_inside_the_evolute_near_the_centre()
    {
        // Within about e^2 a = 42.7 km of the centre the cubic has three real roots; whatever point is returned
        // must map back to the same ECEF coordinates.
        var rng = new Random(42);
        for (int i = 0; i < 20000; i++)
        {
            double scale = i % 2 == 0 ? 50000.0 : 5.0;
            var x = new EcefPoint(Sym(rng) * scale, Sym(rng) * scale, Sym(rng) * scale);
            GeodeticPoint g = EcefToGeodetic.Convert(x);
            Assert.True(g.HeightM < 0, "points near the centre are below the ellipsoid");
            EcefPoint back = GeodeticToEcef.Convert(g);
            AssertNear.Equal(0.0, Distance(x, back), RoundTripToleranceM, "ECEF round-trip distance (m)");
        }
    }

    [Fact]
    public void Centre_of_the_earth_maps_to_the_north_pole_at_minus_b()
    {
        GeodeticPoint g = EcefToGeodetic.Convert(new EcefPoint(0, 0, 0));
        Assert.Equal(Math.PI / 2, g.LatitudeRad);
        Assert.Equal(0.0, g.LongitudeRad);
        AssertNear.Equal(-Wgs84.SemiMinorAxisM, g.HeightM, 1e-9, "height of the centre (m)");
    }

    [Fact]
    public void Equatorial_plane_inside_the_evolute_uses_the_off_equator_normal()
    {
        // Derived: a normal from latitude phi meets the equatorial plane at rho = N e^2 cos(phi), at distance
        // N (1 - e^2) from the surface. For rho = 10 km the northern foot of the normal is returned.
        double e2 = Wgs84.FirstEccentricitySquared;
        GeodeticPoint g = EcefToGeodetic.Convert(new EcefPoint(6000.0, 8000.0, 0.0));
        double sin = Math.Sin(g.LatitudeRad);
        double n = Wgs84.SemiMajorAxisM / Math.Sqrt(1 - (e2 * sin * sin));
        Assert.True(g.LatitudeRad > 0);
        AssertNear.Equal(10000.0, n * e2 * Math.Cos(g.LatitudeRad), 1e-8, "distance from the axis (m)");
        AssertNear.Equal(-n * (1 - e2), g.HeightM, 1e-8, "height (m)");
        AssertNear.Equal(Math.Atan2(8000.0, 6000.0), g.LongitudeRad, 1e-15, "longitude (rad)");
    }

    [Theory]
    [InlineData(1.0)]
    [InlineData(-1.0)]
    public void Polar_axis_gives_exact_pole_and_zero_longitude(double sign)
    {
        GeodeticPoint g = EcefToGeodetic.Convert(new EcefPoint(0, 0, sign * (Wgs84.SemiMinorAxisM + 250.0)));
        Assert.Equal(sign * Math.PI / 2, g.LatitudeRad);
        Assert.Equal(0.0, g.LongitudeRad);
        AssertNear.Equal(250.0, g.HeightM, 1e-9, "height above the pole (m)");
    }

    [Fact]
    public void NaN_input_gives_NaN_output()
    {
        GeodeticPoint g = EcefToGeodetic.Convert(new EcefPoint(double.NaN, 1.0, 2.0));
        Assert.True(double.IsNaN(g.LatitudeRad) && double.IsNaN(g.LongitudeRad) && double.IsNaN(g.HeightM));
    }

    private static void AssertRoundTrip(GeodeticPoint p, Ellipsoid e)
    {
        GeodeticPoint back = EcefToGeodetic.Convert(GeodeticToEcef.Convert(p, e), e);
        double radius = e.SemiMajorAxisM + p.HeightM;
        AssertNear.Equal(p.LatitudeRad * radius, back.LatitudeRad * radius, RoundTripToleranceM, "latitude x (a + h) (m)");
        double lonScale = radius * Math.Cos(p.LatitudeRad);
        AssertNear.Equal(0.0, Angles.WrapPi(back.LongitudeRad - p.LongitudeRad) * lonScale, RoundTripToleranceM, "longitude x (a + h) cos(lat) (m)");
        AssertNear.Equal(p.HeightM, back.HeightM, RoundTripToleranceM, "height (m)");
    }

    private static double Sym(Random rng) => (2 * rng.NextDouble()) - 1;

    private static double Distance(EcefPoint a, EcefPoint b) =>
        Math.Sqrt(((a.XM - b.XM) * (a.XM - b.XM)) + ((a.YM - b.YM) * (a.YM - b.YM)) + ((a.ZM - b.ZM) * (a.ZM - b.ZM)));
}
