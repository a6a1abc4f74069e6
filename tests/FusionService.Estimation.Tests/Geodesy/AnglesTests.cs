using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests.Geodesy;

public sealed class AnglesTests
{
    [Theory]
    [InlineData(Math.PI, Math.PI)]
    [InlineData(-Math.PI, Math.PI)]
    [InlineData(0.0, 0.0)]
    [InlineData(1.0, 1.0)]
    [InlineData(-1.0, -1.0)]
    [InlineData(2 * Math.PI, 0.0)]
    [InlineData(-2 * Math.PI, 0.0)]
    [InlineData(3 * Math.PI, Math.PI)]
    [InlineData(-3 * Math.PI, Math.PI)]
    [InlineData(3.5 * Math.PI, -0.5 * Math.PI)]
    [InlineData(-3.5 * Math.PI, 0.5 * Math.PI)]
    public void WrapPi_maps_into_half_open_interval(double input, double expected) =>
        AssertNear.Equal(expected, Angles.WrapPi(input), 1e-15, "wrapped angle (rad)");

    [Fact]
    public void WrapPi_just_beyond_pi_wraps_to_just_above_minus_pi()
    {
        double above = Math.BitIncrement(Math.PI);
        double below = Math.BitDecrement(-Math.PI);
        Assert.True(Angles.WrapPi(above) > -Math.PI, "just above pi must land just above -pi");
        AssertNear.Equal(-Math.PI, Angles.WrapPi(above), 1e-15, "WrapPi(pi + ulp) (rad)");
        AssertNear.Equal(Math.PI, Angles.WrapPi(below), 1e-15, "WrapPi(-pi - ulp) (rad)");
        Assert.True(Angles.WrapPi(below) <= Math.PI);
    }

    [Fact]
    public void WrapPi_result_is_in_range_and_equivalent_for_large_and_random_angles()
    {
        var rng = new Random(20240611);
        for (int i = 0; i < 10000; i++)
        {
            double x = (rng.NextDouble() - 0.5) * 2e4;
            double w = Angles.WrapPi(x);
            Assert.True(w > -Math.PI && w <= Math.PI, $"WrapPi({x}) = {w} outside (-pi, pi]");
            AssertNear.Equal(Math.Sin(x), Math.Sin(w), 1e-11, "sin of wrapped angle (-)");
            AssertNear.Equal(Math.Cos(x), Math.Cos(w), 1e-11, "cos of wrapped angle (-)");
        }
    }

    [Theory]
    [InlineData(double.NaN)]
    [InlineData(double.PositiveInfinity)]
    [InlineData(double.NegativeInfinity)]
    public void WrapPi_of_non_finite_is_NaN(double input) => Assert.True(double.IsNaN(Angles.WrapPi(input)));

    [Fact]
    public void FromDms_returns_decimal_degrees_with_sign_from_flag()
    {
        AssertNear.Equal(53.0 + (48.0 / 60) + (33.820 / 3600), Angles.FromDms(53, 48, 33.820, false), 1e-12, "53 48 33.820 (deg)");
        AssertNear.Equal(-(37.0 + (57.0 / 60) + (3.72030 / 3600)), Angles.FromDms(37, 57, 3.72030, true), 1e-12, "-37 57 03.72030 (deg)");
        AssertNear.Equal(-0.5, Angles.FromDms(0, 30, 0, true), 1e-15, "-0 30 00 (deg)");
    }

    [Theory]
    [InlineData(-1.0, 0.0, 0.0)]
    [InlineData(1.0, 60.0, 0.0)]
    [InlineData(1.0, -1.0, 0.0)]
    [InlineData(1.0, 0.0, 60.0)]
    [InlineData(1.0, 0.0, double.NaN)]
    [InlineData(double.PositiveInfinity, 0.0, 0.0)]
    public void FromDms_rejects_out_of_range_components(double d, double m, double s) =>
        Assert.Throws<ArgumentOutOfRangeException>(() => Angles.FromDms(d, m, s, false));

    [Fact]
    public void Degree_radian_conversions_and_GeodeticPoint_FromDegrees_agree()
    {
        AssertNear.Equal(Math.PI, Angles.DegreesToRadians(180), 1e-15, "180 deg (rad)");
        AssertNear.Equal(90.0, Angles.RadiansToDegrees(Math.PI / 2), 1e-13, "pi/2 (deg)");
        GeodeticPoint p = GeodeticPoint.FromDegrees(-33.5, 151.25, 12.0);
        AssertNear.Equal(-33.5, p.LatitudeDeg, 1e-12, "latitude (deg)");
        AssertNear.Equal(151.25, p.LongitudeDeg, 1e-12, "longitude (deg)");
        Assert.Equal(12.0, p.HeightM);
        Assert.Equal(0.0, GeodeticPoint.FromDegrees(1, 2).HeightM);
    }
}
