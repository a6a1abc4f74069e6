// One vehicle of the fleet list.
namespace FusionService.Vehicles;

/// <summary>A vehicle's newest estimate, how fresh it is, and its alerts (estimates, not for safety-critical navigation).</summary>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="Time">Time of the newest estimate (the time of the measurement it includes last).</param>
/// <param name="LatDeg">WGS-84 latitude, degrees.</param>
/// <param name="LonDeg">WGS-84 longitude, degrees.</param>
/// <param name="HeadingDeg">Heading as a course, degrees clockwise from north; meaningless while the vehicle stands.</param>
/// <param name="SpeedMps">Estimated speed, m/s.</param>
/// <param name="Ellipse95">95 % horizontal error ellipse.</param>
/// <param name="Status">
/// <c>silent</c> (nothing received for more than <c>silent_after_s</c>), <c>carried</c> (an unresolved
/// <c>moved_without_driving</c> alert: towed, on a ferry, lifted), <c>moving</c> (estimated speed at least 0.5 m/s) or
/// <c>stopped</c>; the first that applies.
/// </param>
/// <param name="EstimateAgeS">Seconds from the estimate's time to the server's clock (<c>as_of</c> of the list); large for
/// a vehicle that is silent or whose data arrives late.</param>
/// <param name="LastReceivedAt">When the service last received anything from the vehicle (server clock); null when not
/// recorded.</param>
/// <param name="LastReceivedAgeS">Seconds since then; null with it.</param>
/// <param name="LastReceivedBySensor">When the service last received each sensor.</param>
/// <param name="OpenAlerts">Number of the vehicle's open alerts (not yet acknowledged).</param>
/// <param name="UnresolvedAlerts">Number of its alerts not yet resolved (open or acknowledged).</param>
public sealed record VehicleSummary(
    string Vehicle,
    DateTimeOffset Time,
    double LatDeg,
    double LonDeg,
    double HeadingDeg,
    double SpeedMps,
    ErrorEllipseResponse Ellipse95,
    string Status,
    double EstimateAgeS,
    DateTimeOffset? LastReceivedAt,
    double? LastReceivedAgeS,
    SensorReceiptsResponse LastReceivedBySensor,
    int OpenAlerts,
    int UnresolvedAlerts);
