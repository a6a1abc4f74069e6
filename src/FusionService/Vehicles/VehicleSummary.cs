// The latest stored fused state of one vehicle, for the fleet list.
namespace FusionService.Vehicles;

/// <summary>The latest stored fused state of a vehicle (estimates, not for safety-critical navigation).</summary>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="Time">Time of the state.</param>
/// <param name="LatDeg">WGS-84 latitude, degrees.</param>
/// <param name="LonDeg">WGS-84 longitude, degrees.</param>
/// <param name="HeadingDeg">Heading as a course, degrees clockwise from north.</param>
/// <param name="SpeedMps">Speed, m/s.</param>
/// <param name="Ellipse95">95 % horizontal error ellipse.</param>
public sealed record VehicleSummary(string Vehicle, DateTimeOffset Time, double LatDeg, double LonDeg, double HeadingDeg, double SpeedMps, ErrorEllipseResponse Ellipse95);
