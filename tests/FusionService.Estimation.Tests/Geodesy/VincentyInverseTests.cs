using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests.Geodesy;

public sealed class VincentyInverseTests
{
    private static readonly double ArcsecRad = Angles.DegreesToRadians(1.0 / 3600);

    [Fact]
    public void Geoscience_Australia_worked_example_on_GRS80()
    {
        // Geoscience Australia, Vincenty inverse worked example (published): Flinders Peak to Buninyong.
        var p1 = GeodeticPoint.FromDegrees(Angles.FromDms(37, 57, 3.72030, true), Angles.FromDms(144, 25, 29.52440, false));
        var p2 = GeodeticPoint.FromDegrees(Angles.FromDms(37, 39, 10.15610, true), Angles.FromDms(143, 55, 35.38390, false));
        Assert.True(VincentyInverse.TryCompute(p1, p2, Ellipsoid.Grs80, out GeodesicInverseResult r));
        AssertNear.Equal(54972.271, r.DistanceM, 1e-3, "distance (m)");
        AssertNear.EqualAngle(Angles.DegreesToRadians(Angles.FromDms(306, 52, 5.37, false)), r.InitialAzimuthRad, 0.01 * ArcsecRad, "forward azimuth (rad)");
        // GA's reverse azimuth is the direction from point 2 back to point 1: final azimuth + 180 deg.
        AssertNear.EqualAngle(Angles.DegreesToRadians(Angles.FromDms(127, 10, 25.07, false)), r.FinalAzimuthRad + Math.PI, 0.01 * ArcsecRad, "reverse azimuth (rad)");
        Assert.Equal(r, VincentyInverse.Compute(p1, p2, Ellipsoid.Grs80));
    }

    [Fact]
    public void Vincenty_1975_test_line_a_on_Bessel()
    {
        // Vincenty, Survey Review 23(176), 1975, test line (a), Bessel ellipsoid (from memory): s = 14110526.170 m,
        // alpha1 = 96 deg 36' 08.79960", alpha2 = 137 deg 52' 22.01454" (alpha2 "in the direction P1P2 produced",
        // i.e. the forward azimuth at point 2, also from memory).
        var p1 = GeodeticPoint.FromDegrees(Angles.FromDms(55, 45, 0, false), 0);
        var p2 = GeodeticPoint.FromDegrees(Angles.FromDms(33, 26, 0, true), Angles.FromDms(108, 13, 0, false));
        Assert.True(VincentyInverse.TryCompute(p1, p2, Ellipsoid.Bessel1841, out GeodesicInverseResult r));
        AssertNear.Equal(14110526.170, r.DistanceM, 1e-3, "distance (m)");
        AssertNear.EqualAngle(Angles.DegreesToRadians(Angles.FromDms(96, 36, 8.79960, false)), r.InitialAzimuthRad, 1e-5 * ArcsecRad, "azimuth 1 (rad)");
        AssertNear.EqualAngle(Angles.DegreesToRadians(Angles.FromDms(137, 52, 22.01454, false)), r.FinalAzimuthRad, 1e-5 * ArcsecRad, "azimuth 2 (rad)");
    }

    [Theory]
    [InlineData("GA", -37.950, 144.4249, -37.6528, 143.9265)]
    [InlineData("Vincenty a", 55.75, 0.0, -33.4333333, 108.2166667)]
    [InlineData("polar", 80.0, -30.0, 85.0, 140.0)]
    [InlineData("equatorial", 0.0, 0.0, 0.0, 120.0)]
    [InlineData("southern long", -60.0, 20.0, 10.0, -150.0)]
    public void Result_agrees_with_independent_integration_of_the_geodesic_equation(
        string name, double lat1, double lon1, double lat2, double lon2)
    {
        // Derived: following the returned azimuth for the returned distance with a Runge-Kutta integration of the
        // geodesic ODE must land on point 2 (to 1 mm) heading along the returned final azimuth.
        var p1 = GeodeticPoint.FromDegrees(lat1, lon1);
        var p2 = GeodeticPoint.FromDegrees(lat2, lon2);
        Assert.True(VincentyInverse.TryCompute(p1, p2, Ellipsoid.Wgs84, out GeodesicInverseResult r), name);
        AssertLandsOn(p1, p2, r, Ellipsoid.Wgs84);
    }

    [Fact]
    public void Coincident_points_have_zero_distance()
    {
        var p = GeodeticPoint.FromDegrees(52.5, 13.4, 100.0);
        Assert.True(VincentyInverse.TryCompute(p, p with { HeightM = -7 }, Ellipsoid.Wgs84, out GeodesicInverseResult r));
        Assert.Equal(new GeodesicInverseResult(0.0, 0.0, 0.0), r);
        Assert.Equal(0.0, VincentyInverse.Compute(p, p).DistanceM);
        Assert.Equal(0.0, VincentyInverse.Compute(GeodeticPoint.FromDegrees(0, 180), GeodeticPoint.FromDegrees(0, -180)).DistanceM);
    }

    [Fact]
    public void One_pole_given_with_two_longitudes_is_at_zero_distance()
    {
        GeodesicInverseResult r = VincentyInverse.Compute(GeodeticPoint.FromDegrees(90, 0), GeodeticPoint.FromDegrees(90, 100));
        AssertNear.Equal(0.0, r.DistanceM, 1e-6, "distance between two spellings of the north pole (m)");
    }

    [Theory]
    [InlineData(0.0, 90.0, 90.0)]
    [InlineData(0.0, 0.0, 180.0)]
    [InlineData(30.0, -60.0, -90.0)]
    [InlineData(30.0, 120.0, 90.0)]
    [InlineData(0.0, -90.0, -90.0)]
    public void Azimuth_leaving_the_north_pole_follows_the_given_meridian(double poleLonDeg, double lonDeg, double expectedDeg)
    {
        // Documented convention: at a pole the azimuth is the limit along the meridian of the pole's given
        // longitude, so leaving the north pole towards longitude lambda2 has azimuth pi - (lambda2 - lambda_pole).
        var pole = GeodeticPoint.FromDegrees(90, poleLonDeg);
        GeodesicInverseResult r = VincentyInverse.Compute(pole, GeodeticPoint.FromDegrees(45, lonDeg));
        AssertNear.EqualAngle(Angles.DegreesToRadians(expectedDeg), r.InitialAzimuthRad, 1e-12, "azimuth leaving the pole (rad)");
        AssertNear.Equal(Meridian.ArcM(Math.PI / 4, Math.PI / 2), r.DistanceM, 1e-4, "pole to 45 deg (m)");
    }

    [Fact]
    public void Pole_to_pole_is_twice_the_quarter_meridian()
    {
        Assert.True(VincentyInverse.TryCompute(GeodeticPoint.FromDegrees(90, 0), GeodeticPoint.FromDegrees(-90, 0), Ellipsoid.Wgs84, out GeodesicInverseResult r));
        AssertNear.Equal(2 * Meridian.QuarterM(), r.DistanceM, 1e-4, "pole to pole (m)");
        AssertNear.EqualAngle(Math.PI, r.InitialAzimuthRad, 1e-12, "leaving the north pole due south (rad)");
    }

    [Fact]
    public void Swapping_the_points_keeps_the_distance_and_reverses_the_azimuths()
    {
        var rng = new Random(5);
        for (int i = 0; i < 2000; i++)
        {
            var p1 = GeodeticPoint.FromDegrees((rng.NextDouble() * 180) - 90, (rng.NextDouble() * 360) - 180);
            var p2 = GeodeticPoint.FromDegrees((rng.NextDouble() * 180) - 90, (rng.NextDouble() * 360) - 180);
            GeodesicInverseResult forward = VincentyInverse.Compute(p1, p2);
            GeodesicInverseResult backward = VincentyInverse.Compute(p2, p1);
            AssertNear.Equal(forward.DistanceM, backward.DistanceM, 1e-4, "distance symmetry (m)");
            AssertNear.EqualAngle(forward.FinalAzimuthRad + Math.PI, backward.InitialAzimuthRad, 1e-9, "reversed azimuth at point 2 (rad)");
            Assert.True(forward.InitialAzimuthRad > -Math.PI && forward.InitialAzimuthRad <= Math.PI);
            Assert.True(forward.FinalAzimuthRad > -Math.PI && forward.FinalAzimuthRad <= Math.PI);
        }
    }

    [Theory]
    [InlineData(double.NaN, 0.0)]
    [InlineData(0.0, double.PositiveInfinity)]
    [InlineData(1.5707963267948968, 0.0)]
    [InlineData(-1.6, 0.0)]
    public void Invalid_input_fails_TryCompute_and_gives_NaN_from_Compute(double latRad, double lonRad)
    {
        var bad = new GeodeticPoint(latRad, lonRad);
        var good = GeodeticPoint.FromDegrees(10, 10);
        Assert.False(VincentyInverse.TryCompute(bad, good, Ellipsoid.Wgs84, out _));
        GeodesicInverseResult r = VincentyInverse.Compute(good, bad);
        Assert.True(double.IsNaN(r.DistanceM) && double.IsNaN(r.InitialAzimuthRad) && double.IsNaN(r.FinalAzimuthRad));
    }

    internal static void AssertLandsOn(GeodeticPoint p1, GeodeticPoint p2, GeodesicInverseResult r, Ellipsoid e)
    {
        (GeodeticPoint end, double arrival) = GeodesicOde.Travel(p1, r.InitialAzimuthRad, r.DistanceM, e, 20000);
        EcefPoint target = GeodeticToEcef.Convert(p2 with { HeightM = 0 }, e);
        EcefPoint reached = GeodeticToEcef.Convert(end with { HeightM = 0 }, e);
        double miss = Math.Sqrt(Sq(target.XM - reached.XM) + Sq(target.YM - reached.YM) + Sq(target.ZM - reached.ZM));
        AssertNear.Equal(0.0, miss, 1e-3, "miss distance of the integrated geodesic (m)");
        AssertNear.EqualAngle(r.FinalAzimuthRad, arrival, 1e-8, "arrival azimuth (rad)");
    }

    private static double Sq(double x) => x * x;
}
