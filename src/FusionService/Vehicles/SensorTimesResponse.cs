// When each sensor last contributed.
namespace FusionService.Vehicles;

/// <summary>Time of the newest processed measurement of each sensor (null when none since the track was rebuilt).</summary>
/// <param name="GnssPosition">GNSS position fix.</param>
/// <param name="GnssVelocity">GNSS speed and course.</param>
/// <param name="Wheel">Wheel speed.</param>
/// <param name="Imu">Inertial sample.</param>
public sealed record SensorTimesResponse(DateTimeOffset? GnssPosition, DateTimeOffset? GnssVelocity, DateTimeOffset? Wheel, DateTimeOffset? Imu);
