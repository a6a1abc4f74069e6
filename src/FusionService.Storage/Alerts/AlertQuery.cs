// Filters of an alert listing.
namespace FusionService.Storage.Alerts;

/// <summary>Filters for <see cref="AlertRepository.ListAsync"/>; null means "any".</summary>
/// <param name="FleetId">The fleet (always required).</param>
/// <param name="State"><c>open</c>, <c>acknowledged</c>, <c>resolved</c> or <c>unresolved</c> (open or acknowledged).</param>
/// <param name="VehicleId">One vehicle.</param>
/// <param name="Kind">One alert kind.</param>
/// <param name="From">Alerts still active at or after this instant (ended_at null or at/after it).</param>
/// <param name="To">Alerts started at or before this instant.</param>
/// <param name="Limit">Most rows returned (1-1001: a page of up to 1000 and one to tell whether more follow).</param>
/// <param name="SeverityFirst">Order critical, warning, info first, then newest start first; otherwise newest start first.</param>
/// <param name="After">Paging: only rows after this one in the chosen order; null to start at the first.</param>
public sealed record AlertQuery(
    Guid FleetId,
    string? State = null,
    string? VehicleId = null,
    string? Kind = null,
    DateTimeOffset? From = null,
    DateTimeOffset? To = null,
    int Limit = 100,
    bool SeverityFirst = false,
    AlertPosition? After = null);
