// The value of a wheel-speed measurement under its own name.
namespace FusionService.Estimation.Measurements;

/// <summary>A <see cref="SensorKind.WheelSpeed"/> measurement's value (see <see cref="Measurement.AsWheelSpeed"/>).</summary>
/// <param name="SpeedMps">Wheel (odometer) speed, m/s.</param>
public readonly record struct WheelSpeedView(double SpeedMps);
