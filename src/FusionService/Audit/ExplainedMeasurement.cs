// One measurement of an explanation and the filter's decision on it.
namespace FusionService.Audit;

/// <summary>One measurement and its effect on the estimate.</summary>
/// <param name="Time">Measurement time.</param>
/// <param name="Sensor">gnss_position, gnss_velocity, wheel or imu.</param>
/// <param name="Values">The measured values: lat_deg, lon_deg, accuracy_m (1-sigma per axis) | speed_mps, course_deg | speed_mps | yaw_rate_dps, accel_mps2.</param>
/// <param name="Residual">Innovation (measured minus predicted), one or two components in <c>residual_units</c>; null when none was formed.</param>
/// <param name="ResidualUnits">Units of the residual components (m, m | m/s, deg | m/s | deg/s, m/s^2); heading residuals are counter-clockwise.</param>
/// <param name="Nis">Normalised innovation squared; null when none was formed.</param>
/// <param name="NisDof">Dimension of the innovation (chi-square degrees of freedom).</param>
/// <param name="GateThreshold">NIS threshold of the gate it was compared with.</param>
/// <param name="Decision">accepted, gated, too_late, track_reset, initialising, before_start, unused or unusable (the filter failed numerically on it; skipped).</param>
/// <param name="PositionShiftM">How far the update moved the position estimate, metres, |posterior - prior| in the track's
/// local plane (0 when not fused; for a track reset, the distance from the track to the fix it restarted at).</param>
public sealed record ExplainedMeasurement(
    DateTimeOffset Time,
    string Sensor,
    IReadOnlyDictionary<string, double> Values,
    IReadOnlyList<double>? Residual,
    IReadOnlyList<string>? ResidualUnits,
    double? Nis,
    int? NisDof,
    double? GateThreshold,
    string Decision,
    double? PositionShiftM);
