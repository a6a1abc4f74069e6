namespace FusionService.Estimation.Geodesy;

/// <summary>Angle unit conversions and wrapping.</summary>
public static class Angles
{
    private const double TwoPi = 2.0 * Math.PI;

    /// <summary>Converts degrees to radians.</summary>
    /// <param name="degrees">Angle, degrees.</param>
    /// <returns>Angle, radians.</returns>
    public static double DegreesToRadians(double degrees) => degrees * (Math.PI / 180.0);

    /// <summary>Converts radians to degrees.</summary>
    /// <param name="radians">Angle, radians.</param>
    /// <returns>Angle, degrees.</returns>
    public static double RadiansToDegrees(double radians) => radians * (180.0 / Math.PI);

    /// <summary>Converts sexagesimal degrees, minutes, seconds to decimal degrees (not radians).</summary>
    /// <param name="deg">Whole or fractional degrees, &gt;= 0.</param>
    /// <param name="min">Arc minutes, in [0, 60).</param>
    /// <param name="sec">Arc seconds, in [0, 60).</param>
    /// <param name="negative">True for south latitudes, west longitudes or negative angles: the sign is carried
    /// here, never by the components, so that -0 deg 30' is expressible.</param>
    /// <returns>Angle, decimal degrees.</returns>
    /// <exception cref="ArgumentOutOfRangeException">A component is negative or not finite, or minutes or seconds
    /// are 60 or more.</exception>
    public static double FromDms(double deg, double min, double sec, bool negative)
    {
        if (!(deg >= 0) || double.IsInfinity(deg))
        {
            throw new ArgumentOutOfRangeException(nameof(deg), deg, "must be finite and >= 0");
        }

        if (!(min >= 0 && min < 60))
        {
            throw new ArgumentOutOfRangeException(nameof(min), min, "must be in [0, 60)");
        }

        if (!(sec >= 0 && sec < 60))
        {
            throw new ArgumentOutOfRangeException(nameof(sec), sec, "must be in [0, 60)");
        }

        double value = deg + (min / 60.0) + (sec / 3600.0);
        return negative ? -value : value;
    }

    /// <summary>Maps an angle to the interval (-pi, pi].</summary>
    /// <param name="rad">Angle, radians.</param>
    /// <returns>The equivalent angle in (-pi, pi], radians: pi and -pi both map to pi; NaN and infinities give NaN.
    /// The remainder is exact (IEEE 754 remainder), so the only rounding is in adding 2 pi to results at -pi.</returns>
    public static double WrapPi(double rad)
    {
        double r = Math.IEEERemainder(rad, TwoPi);
        return r <= -Math.PI ? r + TwoPi : r;
    }
}
