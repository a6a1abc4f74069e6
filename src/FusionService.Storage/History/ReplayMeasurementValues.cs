// The columns of a stored measurement that a replay of the filter needs.
namespace FusionService.Storage.History;

/// <summary>One stored, non-duplicate measurement as <see cref="TrackHistoryReader.ReadReplayMeasurementsAsync(Guid, string, long, long, short, short, Action{ReplayMeasurementValues}, CancellationToken)"/> hands it over.</summary>
/// <param name="Kind">Sensor kind code (the estimation core's <c>SensorKind</c>).</param>
/// <param name="TimeUs">Measurement time, Unix microseconds.</param>
/// <param name="MessageKey">Message key (56 bits, non-negative).</param>
/// <param name="V0">First value, in the units the kind defines.</param>
/// <param name="V1">Second value, or null.</param>
/// <param name="V2">Third value, or null.</param>
public readonly record struct ReplayMeasurementValues(short Kind, long TimeUs, long MessageKey, double V0, double? V1, double? V2);
