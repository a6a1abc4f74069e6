// One fused position on the positions stream.
using FusionService.Vehicles;

namespace FusionService.Live;

/// <summary>A frame of <c>/v1/positions/stream</c>: the newest fused position of a vehicle.</summary>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="Time">Time of the estimate (data time, UTC).</param>
/// <param name="LatDeg">WGS-84 latitude, degrees.</param>
/// <param name="LonDeg">WGS-84 longitude, degrees.</param>
/// <param name="HeadingDeg">Course, degrees clockwise from north in [0, 360).</param>
/// <param name="SpeedMps">Speed, m/s.</param>
/// <param name="Ellipse95">95 % horizontal error ellipse.</param>
public sealed record PositionUpdate(string Vehicle, DateTimeOffset Time, double LatDeg, double LonDeg, double HeadingDeg, double SpeedMps, ErrorEllipseResponse Ellipse95);
