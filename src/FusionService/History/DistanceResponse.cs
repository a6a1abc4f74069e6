// Distance travelled over a window, four ways.
namespace FusionService.History;

/// <summary>Distance travelled by one vehicle over [from, to).</summary>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="From">Window start, RFC 3339 UTC.</param>
/// <param name="To">Window end (exclusive), RFC 3339 UTC.</param>
/// <param name="SmoothedM">Distance along the RTS-smoothed track (integrated smoothed speed and acceleration), metres.</param>
/// <param name="SmoothedSdM">Its standard deviation from the smoothed covariances and cross-covariances, metres.</param>
/// <param name="DrivenM">The part of <c>smoothed_m</c> the vehicle drove itself, metres.</param>
/// <param name="CarriedM">The part of <c>smoothed_m</c> covered while the track took the vehicle to be carried — towed,
/// on a ferry, lifted: GNSS moving while every wheel sample read zero — metres (see the <c>moved_without_driving</c> alert).</param>
/// <param name="RawPolylineM">Length of the polyline through every stored GNSS fix (ellipsoidal, Vincenty), metres: GNSS noise inflates it.</param>
/// <param name="WheelM">Wheel-speed readings divided by the smoothed wheel-speed scale, integrated, metres.</param>
/// <param name="StationaryS">Time the smoothed speed stayed at or below 0.05 m/s, seconds.</param>
/// <param name="Caution">The estimates caution.</param>
public sealed record DistanceResponse(
    string Vehicle, string From, string To, double SmoothedM, double SmoothedSdM, double DrivenM, double CarriedM, double RawPolylineM, double WheelM,
    double StationaryS, string Caution);
