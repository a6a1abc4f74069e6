// One waypoint of a driven route.
namespace FusionService.Scenarios;

/// <summary>A waypoint of a route for <see cref="RouteDriver"/>, in the scenario's local frame.</summary>
/// <param name="EastM">East from the scenario origin, metres.</param>
/// <param name="NorthM">North from the scenario origin, metres.</param>
/// <param name="DwellS">
/// Stop duration at this waypoint, seconds, non-negative; 0 drives through. At a corner the van stops at the middle
/// of the rounded corner, elsewhere on the waypoint itself. Route ends always come to rest; a dwell there extends it.
/// </param>
public readonly record struct RouteWaypoint(double EastM, double NorthM, double DwellS = 0.0);
