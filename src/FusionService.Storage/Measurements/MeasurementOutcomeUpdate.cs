// A new verdict of the filter on a stored measurement.
namespace FusionService.Storage.Measurements;

/// <summary>The filter's (new) verdict on a stored measurement, for <see cref="MeasurementVerdictLog"/>.</summary>
/// <param name="Key">The stored measurement.</param>
/// <param name="Outcome">What the filter did with it.</param>
/// <param name="Nis">Normalised innovation squared (dimensionless, non-negative), or null when no update was attempted.</param>
/// <param name="TrackReset">True when the measurement restarted the track.</param>
public readonly record struct MeasurementOutcomeUpdate(MeasurementKey Key, MeasurementOutcome Outcome, double? Nis, bool TrackReset);
