using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests.Geodesy;

/// <summary>Nearly antipodal lines, where Vincenty's lambda iteration fails and <see cref="VincentyInverse.Compute(GeodeticPoint, GeodeticPoint, Ellipsoid)"/>
/// falls back to the azimuth search.</summary>
public sealed class NearAntipodalTests
{
    public static TheoryData<double, double, double> FailingLines => new()
    {
        { 0.0, 0.5, 179.7 },
        { -30.0, 29.9, 179.8 },
        { 0.0, 0.0, 179.5 },
        { 10.0, -10.05, 179.9 },
        { 0.0, 0.0, 179.9 },
        { 1.0, -1.0, 179.99 },
        { 0.1, -0.1, 179.5 },
        { -0.2, 0.3, -179.6 },
    };

    [Fact]
    public void Quarter_meridian_by_numerical_integration()
    {
        // Derived: 2 x the WGS-84 quarter meridian = 20003931.4586 m.
        AssertNear.Equal(20003931.4586, 2 * Meridian.QuarterM(), 1e-4, "half meridian (m)");
    }

    [Fact]
    public void Exactly_antipodal_points_on_the_equator_are_half_a_meridian_apart()
    {
        var p1 = GeodeticPoint.FromDegrees(0, 0);
        var p2 = GeodeticPoint.FromDegrees(0, 180);
        Assert.False(VincentyInverse.TryCompute(p1, p2, Ellipsoid.Wgs84, out _));
        GeodesicInverseResult r = VincentyInverse.Compute(p1, p2);
        AssertNear.Equal(2 * Meridian.QuarterM(), r.DistanceM, 1e-4, "antipodal distance (m)");
        AssertNear.Equal(1.0, Math.Abs(Math.Cos(r.InitialAzimuthRad)), 1e-12, "|cos(initial azimuth)| (through a pole)");
        VincentyInverseTests.AssertLandsOn(p1, p2, r, Ellipsoid.Wgs84);
    }

    [Fact]
    public void Exactly_antipodal_points_on_a_sphere_are_pi_a_apart()
    {
        Ellipsoid sphere = Ellipsoid.FromInverseFlattening(6371000.0, double.PositiveInfinity);
        GeodesicInverseResult r = VincentyInverse.Compute(GeodeticPoint.FromDegrees(0, 0), GeodeticPoint.FromDegrees(0, 180), sphere);
        AssertNear.Equal(Math.PI * 6371000.0, r.DistanceM, 1e-6, "antipodal distance on a sphere (m)");
    }

    [Theory]
    [MemberData(nameof(FailingLines))]
    public void Iteration_fails_and_the_fallback_gives_the_geodesic(double lat1, double lat2, double dLon)
    {
        var p1 = GeodeticPoint.FromDegrees(lat1, 20.0);
        var p2 = GeodeticPoint.FromDegrees(lat2, 20.0 + dLon);
        Assert.False(VincentyInverse.TryCompute(p1, p2, Ellipsoid.Wgs84, out _));
        GeodesicInverseResult r = VincentyInverse.Compute(p1, p2);
        Assert.True(double.IsFinite(r.DistanceM) && double.IsFinite(r.InitialAzimuthRad) && double.IsFinite(r.FinalAzimuthRad));

        // Independent: the integrated geodesic with these azimuths and length ends on point 2.
        VincentyInverseTests.AssertLandsOn(p1, p2, r, Ellipsoid.Wgs84);

        // Symmetry.
        GeodesicInverseResult back = VincentyInverse.Compute(p2, p1);
        AssertNear.Equal(r.DistanceM, back.DistanceM, 1e-4, "distance symmetry (m)");

        // No two points of an oblate ellipsoid are further apart than half a meridian (antipodes).
        Assert.True(r.DistanceM <= (2 * Meridian.QuarterM()) + 1e-4, $"{r.DistanceM} m exceeds half a meridian");

        // Triangle inequality through the poles and through random points (those legs converge normally).
        var rng = new Random(3);
        var vias = new List<GeodeticPoint> { GeodeticPoint.FromDegrees(90, 0), GeodeticPoint.FromDegrees(-90, 0) };
        for (int i = 0; i < 50; i++)
        {
            vias.Add(GeodeticPoint.FromDegrees((rng.NextDouble() * 180) - 90, (rng.NextDouble() * 360) - 180));
        }

        foreach (GeodeticPoint via in vias)
        {
            double detour = VincentyInverse.Compute(p1, via).DistanceM + VincentyInverse.Compute(via, p2).DistanceM;
            Assert.True(r.DistanceM <= detour + 1e-4, $"triangle inequality violated via {via}");
        }
    }

    [Theory]
    [InlineData(0.0, 0.0, 179.39)]
    [InlineData(0.0, 1e-9, 179.39)]
    [InlineData(-1e-7, 1e-8, 179.2)]
    [InlineData(1e-7, -1e-7, 179.45)]
    [InlineData(-1e-12, 0.0, 179.6)]
    [InlineData(0.0, 0.0, 180.0)]
    public void Nearly_equatorial_lines_around_the_limit_of_the_equatorial_geodesic(double lat1, double lat2, double dLon)
    {
        // On the equator the equator itself is the geodesic up to (1 - f) 180 deg = 179.397 deg of longitude;
        // beyond, the geodesic leaves the equator. Either way Compute must land on point 2.
        var p1 = GeodeticPoint.FromDegrees(lat1, -60.0);
        var p2 = GeodeticPoint.FromDegrees(lat2, -60.0 + dLon);
        GeodesicInverseResult r = VincentyInverse.Compute(p1, p2);
        VincentyInverseTests.AssertLandsOn(p1, p2, r, Ellipsoid.Wgs84);
        Assert.True(r.DistanceM <= (2 * Meridian.QuarterM()) + 1e-4, $"{r.DistanceM} m exceeds half a meridian");
    }

    [Fact]
    public void Fallback_on_Bessel_lands_on_the_target()
    {
        var p1 = GeodeticPoint.FromDegrees(-5.0, 0.0);
        var p2 = GeodeticPoint.FromDegrees(4.9, 179.8);
        Assert.False(VincentyInverse.TryCompute(p1, p2, Ellipsoid.Bessel1841, out _));
        VincentyInverseTests.AssertLandsOn(p1, p2, VincentyInverse.Compute(p1, p2, Ellipsoid.Bessel1841), Ellipsoid.Bessel1841);
    }

    [Fact]
    public void Karney_2013_antipodal_example()
    {
        // C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87(1), 2013, inverse example on WGS-84
        // (from memory): phi1 = -30 deg, phi2 = 29.9 deg, lambda12 = 179.8 deg -> s12 = 19989832.82761 m,
        // alpha1 = 161.890524736 deg, alpha2 = 18.090737246 deg.
        var p1 = GeodeticPoint.FromDegrees(-30, 0);
        var p2 = GeodeticPoint.FromDegrees(29.9, 179.8);
        Assert.False(VincentyInverse.TryCompute(p1, p2, Ellipsoid.Wgs84, out _));
        GeodesicInverseResult r = VincentyInverse.Compute(p1, p2);
        AssertNear.Equal(19989832.82761, r.DistanceM, 1e-4, "distance (m)");

        // Near the antipode the azimuth is ill-conditioned: a 0.1 mm error at the far end moves it by
        // 0.1 mm / m12, with the reduced length m12 measured here by perturbing the integrated geodesic.
        double m12 = ReducedLengthM(p1, r);
        double toleranceRad = 1e-4 / m12;
        AssertNear.EqualAngle(Angles.DegreesToRadians(161.890524736), r.InitialAzimuthRad, toleranceRad, "alpha1 (rad)");
        AssertNear.EqualAngle(Angles.DegreesToRadians(18.090737246), r.FinalAzimuthRad, toleranceRad, "alpha2 (rad)");
    }

    [Fact]
    public void Fallback_agrees_with_converged_Vincenty_iteration()
    {
        // Two formulations of the same series: Vincenty's lambda iteration and the azimuth search must agree to
        // 0.1 mm and 1e-9 rad wherever the iteration converges, near-antipodal lines included.
        var rng = new Random(11);
        int compared = 0;
        for (int i = 0; i < 4000; i++)
        {
            var p1 = GeodeticPoint.FromDegrees((rng.NextDouble() * 180) - 90, (rng.NextDouble() * 360) - 180);
            double lat2 = i % 2 == 0 ? (rng.NextDouble() * 180) - 90 : Math.Clamp(-p1.LatitudeDeg + ((rng.NextDouble() - 0.5) * 4), -90, 90);
            double lon2 = i % 2 == 0 ? (rng.NextDouble() * 360) - 180 : p1.LongitudeDeg + 180 + ((rng.NextDouble() - 0.5) * 20);
            var p2 = GeodeticPoint.FromDegrees(lat2, lon2);
            if (!VincentyInverse.TryCompute(p1, p2, Ellipsoid.Wgs84, out GeodesicInverseResult v))
            {
                continue;
            }

            GeodesicInverseResult f = AzimuthSearchInverse.Compute(p1, p2, Ellipsoid.Wgs84);
            AssertNear.Equal(v.DistanceM, f.DistanceM, 1e-4, "distance (m)");
            AssertNear.EqualAngle(v.InitialAzimuthRad, f.InitialAzimuthRad, 1e-9, "initial azimuth (rad)");
            AssertNear.EqualAngle(v.FinalAzimuthRad, f.FinalAzimuthRad, 1e-9, "final azimuth (rad)");
            compared++;
        }

        Assert.True(compared > 3000, $"only {compared} lines converged");
    }

    private static double ReducedLengthM(GeodeticPoint p1, GeodesicInverseResult r)
    {
        const double delta = 1e-6;
        (GeodeticPoint plus, _) = GeodesicOde.Travel(p1, r.InitialAzimuthRad + delta, r.DistanceM, Ellipsoid.Wgs84, 20000);
        (GeodeticPoint minus, _) = GeodesicOde.Travel(p1, r.InitialAzimuthRad - delta, r.DistanceM, Ellipsoid.Wgs84, 20000);
        EcefPoint a = GeodeticToEcef.Convert(plus);
        EcefPoint b = GeodeticToEcef.Convert(minus);
        double d = Math.Sqrt(((a.XM - b.XM) * (a.XM - b.XM)) + ((a.YM - b.YM) * (a.YM - b.YM)) + ((a.ZM - b.ZM) * (a.ZM - b.ZM)));
        return d / (2 * delta);
    }
}
