// When the service last received each sensor of a vehicle.
namespace FusionService.Vehicles;

/// <summary>When the service last received a measurement of each sensor (server clock, UTC); null when never.</summary>
/// <param name="Gnss">GNSS position or speed.</param>
/// <param name="Wheel">Wheel speed.</param>
/// <param name="Imu">Inertial sample (yaw rate).</param>
public sealed record SensorReceiptsResponse(DateTimeOffset? Gnss, DateTimeOffset? Wheel, DateTimeOffset? Imu);
