// True sensor-error states at one instant.
namespace FusionService.Scenarios;

/// <summary>The true values of the filter's two sensor-error states at one instant.</summary>
/// <param name="TimeUs">Time, microseconds since the Unix epoch (UTC).</param>
/// <param name="GyroBiasRps">Gyro yaw-rate bias, radians per second (the gyro reads yaw rate + bias).</param>
/// <param name="WheelScale">Wheel-speed scale factor, dimensionless (the wheel sensor reads speed x scale).</param>
public readonly record struct SensorErrorSample(long TimeUs, double GyroBiasRps, double WheelScale);
