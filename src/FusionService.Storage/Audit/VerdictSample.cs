// One stored measurement with its latest verdict, as the diagnostics read it.

using FusionService.Estimation.Tracking;
namespace FusionService.Storage.Audit;

/// <summary>A measurement's kind, values and time with its latest verdict (<c>judged_measurements</c>).</summary>
/// <param name="Kind">Sensor kind code.</param>
/// <param name="TimeUs">Measurement time, Unix microseconds.</param>
/// <param name="V0">First stored value.</param>
/// <param name="V1">Second stored value, or null.</param>
/// <param name="Outcome">The latest verdict.</param>
/// <param name="Nis">Normalised innovation squared of that verdict, or null.</param>
/// <param name="TrackReset">True when the measurement restarted the track.</param>
/// <param name="W0">First component of the whitened innovation of that verdict (dimensionless), or null (migration 0006).</param>
/// <param name="W1">Second component of the whitened innovation for 2-D measurements, or null.</param>
public readonly record struct VerdictSample(
    short Kind, long TimeUs, double V0, double? V1, OutcomeKind Outcome, double? Nis, bool TrackReset, float? W0, float? W1);
