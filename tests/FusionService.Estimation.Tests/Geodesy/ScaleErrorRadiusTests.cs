using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests.Geodesy;

/// <summary>Checks <see cref="LocalTangentPlane.MaxRadiusForScaleErrorM"/> numerically: (East, North) distances with
/// Up dropped against geodesic distances from <see cref="VincentyInverse"/> (derived check).</summary>
public sealed class ScaleErrorRadiusTests
{
    private static readonly double[] AnchorLatitudesDeg = { 0.0, 30.0, 45.0, 60.0, 80.0, 89.9, -45.0, -75.0 };

    [Theory]
    [InlineData(1e-6)]
    [InlineData(1e-5)]
    [InlineData(1e-4)]
    public void Every_segment_inside_the_radius_meets_the_bound_at_all_azimuths_and_latitudes(double relativeError)
    {
        double radius = LocalTangentPlane.MaxRadiusForScaleErrorM(relativeError);
        foreach (double latDeg in AnchorLatitudesDeg)
        {
            for (int azDeg = 0; azDeg < 360; azDeg += 15)
            {
                foreach (Segment s in RadialSegments(latDeg, azDeg, radius, 1.0))
                {
                    Assert.True(s.RelativeError <= relativeError, $"lat {latDeg} az {azDeg} at {s.DistanceFromAnchorM} m: {s.RelativeError} > {relativeError}");
                }

                foreach (Segment s in TangentialSegments(latDeg, azDeg, radius))
                {
                    Assert.True(s.RelativeError <= relativeError, $"tangential, lat {latDeg} az {azDeg}: {s.RelativeError} > {relativeError}");
                }
            }
        }
    }

    [Theory]
    [InlineData(1e-6)]
    [InlineData(1e-5)]
    [InlineData(1e-4)]
    public void Bound_is_tight_radial_segments_on_the_equator_reach_it_at_the_rim_with_k_2(double relativeError)
    {
        // Heading north from the equator the meridian has the smallest radius of curvature, a (1 - e^2), so the
        // last radial segment inside the radius has nearly the whole allowed error, and just beyond it exceeds it.
        double radius = LocalTangentPlane.MaxRadiusForScaleErrorM(relativeError);
        List<Segment> inside = RadialSegments(0.0, 0, radius, 1.0).ToList();
        Assert.True(inside[^1].RelativeError > 0.95 * relativeError, $"rim segment error {inside[^1].RelativeError} is far below the bound");
        List<Segment> beyond = RadialSegments(0.0, 0, radius, 1.1).ToList();
        Assert.True(beyond[^1].RelativeError > relativeError, "beyond the radius the bound is exceeded");

        // k: segment error ~ d^2 / (2 R^2), distance from the anchor ~ d^2 / (6 R^2), a ratio of 1/3.
        Segment rim = inside[^1];
        AssertNear.Equal(1.0 / 3.0, rim.FromAnchorRelativeError / rim.RelativeError, 0.02, "from-anchor / segment error ratio (-)");
    }

    [Fact]
    public void Radius_for_one_cm_per_km_is_about_28_km()
    {
        // Derived: a (1 - e^2) acos(1 - 1e-5) = 6335439.327 m * 4.4721397e-3 rad.
        AssertNear.Equal(28332.97, LocalTangentPlane.MaxRadiusForScaleErrorM(1e-5), 0.01, "radius for 1e-5 (m)");
    }

    [Theory]
    [InlineData(0.0)]
    [InlineData(-1e-5)]
    [InlineData(1.0)]
    [InlineData(double.NaN)]
    public void Invalid_relative_error_is_rejected(double relativeError) =>
        Assert.Throws<ArgumentOutOfRangeException>(() => LocalTangentPlane.MaxRadiusForScaleErrorM(relativeError));

    /// <summary>Consecutive points on the ellipsoid (h = 0) along a ray from the anchor, up to the given multiple of
    /// the radius in geodesic distance from the anchor.</summary>
    private static IEnumerable<Segment> RadialSegments(double latDeg, int azDeg, double radius, double extent)
    {
        var anchor = GeodeticPoint.FromDegrees(latDeg, 10.0);
        var plane = new LocalTangentPlane(anchor);
        (double sinAz, double cosAz) = Math.SinCos(Angles.DegreesToRadians(azDeg));
        double step = radius / 200;
        GeodeticPoint previous = anchor;
        for (double rho = step; ; rho += step)
        {
            GeodeticPoint p = OnEllipsoid(plane, rho * sinAz, rho * cosAz);
            double fromAnchor = VincentyInverse.Compute(anchor, p).DistanceM;
            if (fromAnchor > extent * radius)
            {
                yield break;
            }

            yield return Measure(plane, anchor, previous, p, fromAnchor);
            previous = p;
        }
    }

    /// <summary>Short segments across the ray at the rim.</summary>
    private static IEnumerable<Segment> TangentialSegments(double latDeg, int azDeg, double radius)
    {
        var anchor = GeodeticPoint.FromDegrees(latDeg, 10.0);
        var plane = new LocalTangentPlane(anchor);
        double az = Angles.DegreesToRadians(azDeg);
        double rho = 0.99 * radius;
        double half = radius / 400;
        (double e, double n) = (rho * Math.Sin(az), rho * Math.Cos(az));
        (double te, double tn) = (Math.Cos(az) * half, -Math.Sin(az) * half);
        GeodeticPoint a = OnEllipsoid(plane, e - te, n - tn);
        GeodeticPoint b = OnEllipsoid(plane, e + te, n + tn);
        yield return Measure(plane, anchor, a, b, rho);
    }

    private static GeodeticPoint OnEllipsoid(LocalTangentPlane plane, double east, double north) =>
        plane.ToGeodetic(new EnuPoint(east, north)) with { HeightM = 0 };

    private static Segment Measure(LocalTangentPlane plane, GeodeticPoint anchor, GeodeticPoint a, GeodeticPoint b, double fromAnchorM)
    {
        EnuPoint ea = plane.ToEnu(a);
        EnuPoint eb = plane.ToEnu(b);
        double planeM = Math.Sqrt(((eb.EastM - ea.EastM) * (eb.EastM - ea.EastM)) + ((eb.NorthM - ea.NorthM) * (eb.NorthM - ea.NorthM)));
        double geodesicM = VincentyInverse.Compute(a, b).DistanceM;
        double planeFromAnchorM = Math.Sqrt((eb.EastM * eb.EastM) + (eb.NorthM * eb.NorthM));
        double geodesicFromAnchorM = VincentyInverse.Compute(anchor, b).DistanceM;
        return new Segment(
            fromAnchorM,
            Math.Abs(geodesicM - planeM) / geodesicM,
            Math.Abs(geodesicFromAnchorM - planeFromAnchorM) / geodesicFromAnchorM);
    }

    private readonly record struct Segment(double DistanceFromAnchorM, double RelativeError, double FromAnchorRelativeError);
}
