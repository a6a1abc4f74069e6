// When each vehicle was last heard from.
using System.Collections.Concurrent;

namespace FusionService.Alerts;

/// <summary>
/// The newest receipt time (server clock) of every vehicle this process has seen, fed by the track grains after each
/// batch and seeded from the store at start-up; read by <see cref="VehicleSilenceScanner"/>. In a multi-silo
/// deployment each silo knows only its own grains' vehicles, which is what its scanner needs.
/// </summary>
public sealed class VehicleActivity
{
    private readonly ConcurrentDictionary<(Guid FleetId, string VehicleId), DateTimeOffset> _last = new();

    /// <summary>Records a receipt (never moves a vehicle's time back).</summary>
    public void Note(Guid fleetId, string vehicleId, DateTimeOffset receivedAt) =>
        _last.AddOrUpdate((fleetId, vehicleId), receivedAt, (_, old) => old >= receivedAt ? old : receivedAt);

    /// <summary>A snapshot of every vehicle and its newest receipt time.</summary>
    public IReadOnlyList<KeyValuePair<(Guid FleetId, string VehicleId), DateTimeOffset>> Snapshot() => [.. _last];
}
