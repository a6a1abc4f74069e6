namespace FusionService.Estimation.Models;

/// <summary>
/// Positions of the eight vehicle state components in the state vector.
/// Heading is measured from local east, counter-clockwise (the mathematical convention of the ENU plane),
/// so a positive yaw rate is a left turn; GNSS course (clockwise from north) is converted at the measurement.
/// </summary>
public static class StateIndex
{
    /// <summary>East coordinate in the track's local tangent plane, metres.</summary>
    public const int EastM = 0;

    /// <summary>North coordinate in the track's local tangent plane, metres.</summary>
    public const int NorthM = 1;

    /// <summary>Heading, radians from east, counter-clockwise, in (-pi, pi].</summary>
    public const int HeadingRad = 2;

    /// <summary>Speed along the heading, metres per second.</summary>
    public const int SpeedMps = 3;

    /// <summary>Yaw rate, radians per second, positive counter-clockwise.</summary>
    public const int YawRateRps = 4;

    /// <summary>Longitudinal acceleration, metres per second squared.</summary>
    public const int AccelMps2 = 5;

    /// <summary>Gyro yaw-rate bias, radians per second (gyro reads yaw rate + bias).</summary>
    public const int GyroBiasRps = 6;

    /// <summary>Wheel-speed scale factor, dimensionless (wheel reads speed x scale; 1 when calibrated).</summary>
    public const int WheelScale = 7;

    /// <summary>Dimension of the state vector.</summary>
    public const int Count = 8;
}
