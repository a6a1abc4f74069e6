// The online calibration of the newest fused state in a window.
namespace FusionService.Audit;

/// <summary>Wheel-speed scale and gyro bias estimated by the filter, with one-sigma standard deviations.</summary>
/// <param name="Time">Time of the fused state they come from.</param>
/// <param name="WheelScale">Wheel-speed scale factor (wheel reads speed x scale), dimensionless.</param>
/// <param name="WheelScaleSd">Its standard deviation.</param>
/// <param name="GyroBiasDps">Gyro yaw-rate bias, degrees per second.</param>
/// <param name="GyroBiasSdDps">Its standard deviation, degrees per second.</param>
public sealed record CalibrationResponse(DateTimeOffset Time, double WheelScale, double WheelScaleSd, double GyroBiasDps, double GyroBiasSdDps);
