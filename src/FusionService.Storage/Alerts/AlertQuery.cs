// Filters of an alert listing.
namespace FusionService.Storage.Alerts;

/// <summary>Filters for <see cref="AlertRepository.ListAsync"/>; null means "any".</summary>
/// <param name="FleetId">The fleet (always required).</param>
/// <param name="State"><c>open</c>, <c>acknowledged</c> or <c>resolved</c>.</param>
/// <param name="VehicleId">One vehicle.</param>
/// <param name="Kind">One alert kind.</param>
/// <param name="From">Alerts still active at or after this instant (ended_at null or at/after it).</param>
/// <param name="To">Alerts started at or before this instant.</param>
/// <param name="Limit">Most rows returned, newest start first (1-1000).</param>
public sealed record AlertQuery(
    Guid FleetId,
    string? State = null,
    string? VehicleId = null,
    string? Kind = null,
    DateTimeOffset? From = null,
    DateTimeOffset? To = null,
    int Limit = 100);
