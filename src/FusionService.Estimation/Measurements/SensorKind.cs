namespace FusionService.Estimation.Measurements;

/// <summary>
/// Kind of a measurement as the filter sees it. The numeric value is the second key of the canonical
/// processing order (time, kind, message key), so it must never be renumbered.
/// </summary>
public enum SensorKind : byte
{
    /// <summary>GNSS horizontal position fix (latitude, longitude, 1-sigma per-axis accuracy).</summary>
    GnssPosition = 0,

    /// <summary>GNSS speed over ground and course over ground.</summary>
    GnssVelocity = 1,

    /// <summary>Wheel (odometer) speed; observes speed x wheel scale.</summary>
    WheelSpeed = 2,

    /// <summary>Inertial sample: gyro yaw rate (observes yaw rate + bias) and, when present, longitudinal acceleration.</summary>
    Imu = 3,
}
