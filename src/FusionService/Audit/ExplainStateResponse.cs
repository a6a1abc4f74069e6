// A fused state in an explanation.
using FusionService.Vehicles;

namespace FusionService.Audit;

/// <summary>A fused state.</summary>
/// <param name="Time">Time of the state (its last measurement).</param>
/// <param name="LatDeg">WGS-84 latitude, degrees.</param>
/// <param name="LonDeg">WGS-84 longitude, degrees.</param>
/// <param name="HeadingDeg">Heading, degrees clockwise from north, in [0, 360).</param>
/// <param name="SpeedMps">Speed, m/s.</param>
/// <param name="Ellipse95">95 % horizontal error ellipse.</param>
public sealed record ExplainStateResponse(DateTimeOffset Time, double LatDeg, double LonDeg, double HeadingDeg, double SpeedMps, ErrorEllipseResponse Ellipse95);
