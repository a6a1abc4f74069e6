// One vehicle of the fleet list.
namespace FusionService.Storage.Vehicles;

/// <summary>A vehicle's newest stored estimate, when it was last heard from, and its alerts.</summary>
/// <param name="VehicleId">Vehicle id.</param>
/// <param name="TimeUs">Time of the newest stored estimate, Unix microseconds.</param>
/// <param name="LatDeg">WGS-84 latitude, degrees.</param>
/// <param name="LonDeg">WGS-84 longitude, degrees.</param>
/// <param name="HeadingRad">Heading, radians (convention of the estimation core).</param>
/// <param name="SpeedMps">Estimated speed, m/s.</param>
/// <param name="EllipseMajorM">Semi-major axis of the error ellipse, metres.</param>
/// <param name="EllipseMinorM">Semi-minor axis, metres.</param>
/// <param name="EllipseOrientationRad">Orientation of the major axis, radians (convention of the estimation core).</param>
/// <param name="LastReceivedAt">Newest receipt of any measurement (server clock); null when none is recorded.</param>
/// <param name="GnssReceivedAt">Newest receipt of a GNSS position or velocity.</param>
/// <param name="WheelReceivedAt">Newest receipt of a wheel speed.</param>
/// <param name="ImuReceivedAt">Newest receipt of an IMU sample.</param>
/// <param name="OpenAlerts">Alerts in state open.</param>
/// <param name="UnresolvedAlerts">Alerts open or acknowledged.</param>
/// <param name="Status"><c>silent</c>, <c>carried</c>, <c>moving</c> or <c>stopped</c>, in that precedence.</param>
public sealed record FleetVehicleRow(
    string VehicleId,
    long TimeUs,
    double LatDeg,
    double LonDeg,
    double HeadingRad,
    double SpeedMps,
    double EllipseMajorM,
    double EllipseMinorM,
    double EllipseOrientationRad,
    DateTime? LastReceivedAt,
    DateTime? GnssReceivedAt,
    DateTime? WheelReceivedAt,
    DateTime? ImuReceivedAt,
    long OpenAlerts,
    long UnresolvedAlerts,
    string Status);
