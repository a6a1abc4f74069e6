// The diagnostics of one vehicle over a time window.
namespace FusionService.Audit;

/// <summary>Per-sensor verdict counts, NIS consistency and latency, calibration, GNSS outages and track resets of one vehicle.</summary>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="From">Start of the window (inclusive), measurement time.</param>
/// <param name="To">End of the window (exclusive), measurement time.</param>
/// <param name="Sensors">One entry per sensor: gnss_position, gnss_velocity, wheel, imu.</param>
/// <param name="Calibration">Wheel-speed scale and gyro bias of the newest fused state in the window; null when there is none.</param>
/// <param name="GnssOutages">Gaps between GNSS position fixes longer than the configured threshold while the vehicle moved.</param>
/// <param name="TrackResets">Measurements that re-initialised the track.</param>
/// <param name="Caution">What the numbers are and are not.</param>
public sealed record DiagnosticsResponse(
    string Vehicle,
    DateTimeOffset From,
    DateTimeOffset To,
    IReadOnlyList<SensorDiagnostics> Sensors,
    CalibrationResponse? Calibration,
    IReadOnlyList<GnssOutageResponse> GnssOutages,
    IReadOnlyList<TrackResetResponse> TrackResets,
    string Caution);
