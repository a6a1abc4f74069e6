// The values of an inertial sample under their own names.
namespace FusionService.Estimation.Measurements;

/// <summary>A <see cref="SensorKind.Imu"/> measurement's values (see <see cref="Measurement.AsImu"/>).</summary>
/// <param name="YawRateRps">Gyro yaw rate about the up axis, rad/s, positive counter-clockwise.</param>
/// <param name="AccelMps2">Longitudinal acceleration, m/s^2; NaN when the sample has none.</param>
public readonly record struct ImuView(double YawRateRps, double AccelMps2)
{
    /// <summary>True when the sample carries a longitudinal acceleration (<see cref="AccelMps2"/> is not NaN).</summary>
    public bool HasAccel => !double.IsNaN(AccelMps2);
}
