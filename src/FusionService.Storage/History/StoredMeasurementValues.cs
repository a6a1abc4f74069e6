// The columns of a stored measurement that history queries need.

using FusionService.Estimation.Tracking;
namespace FusionService.Storage.History;

/// <summary>One stored measurement as the history queries stream it (no fleet, vehicle or receipt time).</summary>
/// <param name="Kind">Sensor kind code (the estimation core's <c>SensorKind</c>).</param>
/// <param name="TimeUs">Measurement time, Unix microseconds.</param>
/// <param name="MessageKey">Message key (56 bits, non-negative).</param>
/// <param name="V0">First value, in the units the kind defines.</param>
/// <param name="V1">Second value, or null.</param>
/// <param name="V2">Third value, or null.</param>
/// <param name="Outcome">What the live filter did with it.</param>
/// <param name="Nis">Normalised innovation squared, or null.</param>
/// <param name="TrackReset">Whether it restarted the track.</param>
public readonly record struct StoredMeasurementValues(
    short Kind, long TimeUs, long MessageKey, double V0, double? V1, double? V2, OutcomeKind Outcome, double? Nis, bool TrackReset);
