// The caller's fleet's vehicle quota.
namespace FusionService.Fleets;

/// <summary>How many vehicles the fleet may have and has.</summary>
/// <param name="MaxVehicles">The quota in force.</param>
/// <param name="Source">fleet (set for this fleet) or default (the service's Tenancy:DefaultMaxVehicles).</param>
/// <param name="Vehicles">Vehicles the fleet has now.</param>
public sealed record VehicleQuotaResponse(int MaxVehicles, string Source, int Vehicles);
