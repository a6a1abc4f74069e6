namespace FusionService.Estimation.Geodesy;

/// <summary>Angle conversions and wrapping.</summary>
public static class Angles
{
    /// <summary>Degrees to radians.</summary>
    public static double DegreesToRadians(double deg) => deg * (Math.PI / 180.0);

    /// <summary>Radians to degrees.</summary>
    public static double RadiansToDegrees(double rad) => rad * (180.0 / Math.PI);

    /// <summary>Wraps an angle to (-π, π]; NaN stays NaN.</summary>
    public static double WrapPi(double rad)
    {
        if (rad > -Math.PI && rad <= Math.PI)
        {
            return rad;
        }

        double wrapped = Math.IEEERemainder(rad, 2.0 * Math.PI);
        return wrapped <= -Math.PI ? wrapped + (2.0 * Math.PI) : wrapped;
    }
}
