// Number of stored measurements of one sensor kind with one outcome.
using FusionService.Storage.Measurements;

namespace FusionService.Storage.Audit;

/// <summary>How many measurements of one kind the filter judged one way in a time range.</summary>
/// <param name="Kind">Sensor kind code, as in <c>measurements.kind</c>.</param>
/// <param name="Outcome">Stored outcome.</param>
/// <param name="Count">Number of measurements.</param>
public readonly record struct OutcomeCount(short Kind, MeasurementOutcome Outcome, long Count);
