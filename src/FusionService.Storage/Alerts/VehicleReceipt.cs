// The newest receipt time of one vehicle.
namespace FusionService.Storage.Alerts;

/// <summary>When the service last received a measurement of a vehicle.</summary>
/// <param name="FleetId">Fleet.</param>
/// <param name="VehicleId">Vehicle.</param>
/// <param name="ReceivedAt">Newest <c>received_at</c> (server clock, UTC).</param>
public readonly record struct VehicleReceipt(Guid FleetId, string VehicleId, DateTimeOffset ReceivedAt);
