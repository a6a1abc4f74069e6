// The caller's fleet's vehicles.
namespace FusionService.Vehicles;

/// <summary>Every vehicle of the caller's fleet with a stored fused state, ordered by id.</summary>
/// <param name="Vehicles">The vehicles.</param>
public sealed record VehicleListResponse(IReadOnlyList<VehicleSummary> Vehicles);
