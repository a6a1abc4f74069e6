// Duplicate deliveries of one vehicle, sensor kind and day.
namespace FusionService.Storage.Audit;

/// <summary>An increment (or total) of <c>duplicate_counts</c>.</summary>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="VehicleId">Vehicle within the fleet.</param>
/// <param name="Kind">Sensor kind code, as in <c>measurements.kind</c>.</param>
/// <param name="Day">UTC calendar day of the measurement time.</param>
/// <param name="Count">Number of duplicate deliveries, non-negative.</param>
public readonly record struct DuplicateCount(Guid FleetId, string VehicleId, short Kind, DateOnly Day, long Count);
