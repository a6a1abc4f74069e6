// One alert as the API shows it.
using System.Text.Json;
using System.Text.Json.Serialization;
using FusionService.Storage.Alerts;

namespace FusionService.Alerts;

/// <summary>An alert (the body of <c>GET /v1/alerts</c> items, acknowledgements, webhook deliveries and stream frames).</summary>
/// <param name="Id">Alert id.</param>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="Kind">Alert kind (see <see cref="AlertKinds"/>).</param>
/// <param name="Severity"><c>info</c>, <c>warning</c> or <c>critical</c>.</param>
/// <param name="State"><c>open</c>, <c>acknowledged</c> or <c>resolved</c>.</param>
/// <param name="StartedAt">When the condition began (data time, UTC).</param>
/// <param name="EndedAt">When it last held before it cleared; null while unresolved.</param>
/// <param name="Count">Occurrences grouped into the alert.</param>
/// <param name="Summary">One plain sentence.</param>
/// <param name="Details">The numbers behind it (kind-specific; units in the key names).</param>
/// <param name="Acknowledged">Who acknowledged it and when; left out while nobody has.</param>
public sealed record AlertResponse(
    Guid Id,
    Guid FleetId,
    string? Vehicle,
    string Kind,
    string Severity,
    string State,
    DateTimeOffset StartedAt,
    [property: JsonIgnore(Condition = JsonIgnoreCondition.Never)] DateTimeOffset? EndedAt,
    int Count,
    string Summary,
    JsonElement Details,
    AlertAcknowledgement? Acknowledged = null)
{
    /// <summary>The response for a stored row.</summary>
    public static AlertResponse From(AlertRow row)
    {
        ArgumentNullException.ThrowIfNull(row);
        using var details = JsonDocument.Parse(row.DetailsJson);
        return new AlertResponse(
            row.AlertId, row.FleetId, row.VehicleId, row.Kind, row.Severity, row.State, row.StartedAt, row.EndedAt, row.Count, row.Summary,
            details.RootElement.Clone(),
            row.AcknowledgedAt is { } at ? new AlertAcknowledgement(at, row.AcknowledgedByKeyId, row.AcknowledgedByLabel ?? string.Empty) : null);
    }
}
