// One stored alert.
namespace FusionService.Storage.Alerts;

/// <summary>A row of <c>alerts</c>.</summary>
/// <param name="AlertId">Id.</param>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="VehicleId">Vehicle the alert is about (null for a fleet-wide alert).</param>
/// <param name="Kind">Alert kind, e.g. <c>gated_burst</c>.</param>
/// <param name="Severity"><c>info</c>, <c>warning</c> or <c>critical</c>.</param>
/// <param name="State"><c>open</c>, <c>acknowledged</c> or <c>resolved</c>.</param>
/// <param name="StartedAt">When the condition began (data time, UTC).</param>
/// <param name="EndedAt">When the condition last held before it cleared; null while unresolved.</param>
/// <param name="LastSeenAt">Newest instant at which the condition held (data time, UTC).</param>
/// <param name="Count">Occurrences grouped into the alert, at least 1.</param>
/// <param name="Summary">One plain sentence.</param>
/// <param name="DetailsJson">The numbers behind the alert as a JSON object.</param>
/// <param name="UpdatedAt">Time of the last change (server clock).</param>
/// <param name="AcknowledgedAt">When it was acknowledged (server clock); null if never.</param>
/// <param name="AcknowledgedByKeyId">The API key that acknowledged it; null if never.</param>
/// <param name="AcknowledgedByLabel">That key's label at the time; null if never.</param>
public sealed record AlertRow(
    Guid AlertId,
    Guid FleetId,
    string? VehicleId,
    string Kind,
    string Severity,
    string State,
    DateTimeOffset StartedAt,
    DateTimeOffset? EndedAt,
    DateTimeOffset? LastSeenAt,
    int Count,
    string Summary,
    string DetailsJson,
    DateTimeOffset UpdatedAt,
    DateTimeOffset? AcknowledgedAt,
    Guid? AcknowledgedByKeyId,
    string? AcknowledgedByLabel);
