namespace FusionService.Estimation.Models;

/// <summary>
/// Positions of the state components in the state vector: eight of the vehicle, then the time-correlated part of the
/// GNSS position error (a first-order Gauss-Markov process per axis, see <see cref="GnssErrorModel"/>).
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

    /// <summary>
    /// Time-correlated east error of the GNSS position fixes, metres (a fix reads east + this + white noise): the slowly
    /// varying part of the receiver's error (atmosphere, orbit and clock, multipath), not a property of the vehicle.
    /// </summary>
    public const int GnssErrorEastM = 8;

    /// <summary>Time-correlated north error of the GNSS position fixes, metres (see <see cref="GnssErrorEastM"/>).</summary>
    public const int GnssErrorNorthM = 9;

    /// <summary>Number of components that describe the vehicle itself (indices 0 to 7).</summary>
    public const int VehicleCount = 8;

    /// <summary>Dimension of the state vector.</summary>
    public const int Count = 10;
}
