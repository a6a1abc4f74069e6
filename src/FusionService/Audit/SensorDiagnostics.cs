// Counts, NIS consistency, whiteness and latency of one sensor.
namespace FusionService.Audit;

/// <summary>Diagnostics of one sensor of one vehicle in the window.</summary>
/// <param name="Sensor">gnss_position, gnss_velocity, wheel or imu.</param>
/// <param name="Accepted">Measurements fused (including those that reset the track).</param>
/// <param name="Gated">Measurements rejected by the chi-square gate.</param>
/// <param name="Duplicate">Duplicate deliveries, counted over the whole UTC days the window touches.</param>
/// <param name="TooLate">Measurements older than the lag window when they arrived (stored, not fused live).</param>
/// <param name="MeanNis">Mean NIS of the fused measurements (null when none).</param>
/// <param name="NisDof">Dimension m of each NIS when all share one (null when none or mixed).</param>
/// <param name="NisCount">Number N of NIS values in the mean.</param>
/// <param name="NisInterval">Two-sided 95 % interval for the mean NIS of a consistent filter (null when none).</param>
/// <param name="Verdict">
/// Overall consistency of the sensor: the NIS verdict (<c>nis_verdict</c>), except that a sensor whose mean NIS
/// is consistent but whose innovations are correlated (<paramref name="Whiteness"/>) is <c>correlated</c>, not consistent.
/// One of consistent, correlated, too_optimistic, too_pessimistic, insufficient_data.
/// </param>
/// <param name="LatencyMs">Arrival latency percentiles, milliseconds (null when the sensor sent nothing).</param>
/// <param name="NisVerdict">Verdict of the mean NIS alone: consistent, too_optimistic, too_pessimistic or insufficient_data.</param>
/// <param name="Whiteness">Autocorrelation and Ljung-Box test of the whitened innovations of the fused measurements (null when none carried one).</param>
public sealed record SensorDiagnostics(
    string Sensor,
    long Accepted,
    long Gated,
    long Duplicate,
    long TooLate,
    double? MeanNis,
    int? NisDof,
    long NisCount,
    NisIntervalResponse? NisInterval,
    string Verdict,
    LatencyPercentilesResponse? LatencyMs,
    string NisVerdict,
    WhitenessResponse? Whiteness);
