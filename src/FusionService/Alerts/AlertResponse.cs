// One alert as the API shows it.
using System.Text.Json;
using System.Text.Json.Serialization;
using FusionService.Storage.Alerts;

namespace FusionService.Alerts;

/// <summary>An alert (the body of <c>GET /v1/alerts</c> items, acknowledgements, webhook deliveries and stream frames).</summary>
/// <param name="Id">Alert id.</param>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="Kind">Alert kind: gated_burst, inconsistent_sensor, gnss_silent_while_moving, track_reset, wheel_scale_out_of_band, moved_without_driving, sensor_isolated or vehicle_silent.</param>
/// <param name="Severity"><c>info</c>, <c>warning</c> or <c>critical</c>.</param>
/// <param name="State"><c>open</c>, <c>acknowledged</c> or <c>resolved</c>.</param>
/// <param name="StartedAt">When the condition began (data time, UTC).</param>
/// <param name="EndedAt">When it last held before it cleared; null while unresolved.</param>
/// <param name="Count">Occurrences grouped into the alert.</param>
/// <param name="Summary">What happened and what it means for the shown position, in plain words (no count: see
/// <c>count</c>).</param>
/// <param name="TechnicalSummary">The rule's own sentence with the numbers behind it, in the terms of the filter.</param>
/// <param name="Details">The numbers behind it (kind-specific; units in the key names).</param>
/// <param name="Acknowledged">Who acknowledged it and when; left out while nobody has.</param>
/// <param name="Links">The van at the alert's time; left out for an alert of the whole fleet.</param>
/// <param name="Caution">The cautions that go with every location; in webhook deliveries and stream frames (a list
/// carries them once).</param>
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
    string TechnicalSummary,
    JsonElement Details,
    AlertAcknowledgement? Acknowledged = null,
    AlertLinks? Links = null,
    string? Caution = null)
{
    private static readonly TimeSpan Margin = TimeSpan.FromMinutes(5);

    /// <summary>The response for a stored row; <paramref name="withCaution"/> adds the cautions (a delivery or frame on its own).</summary>
    public static AlertResponse From(AlertRow row, bool withCaution = false)
    {
        ArgumentNullException.ThrowIfNull(row);
        using var details = JsonDocument.Parse(row.DetailsJson);
        var values = details.RootElement.Clone();
        return new AlertResponse(
            row.AlertId, row.FleetId, row.VehicleId, row.Kind, row.Severity, row.State, row.StartedAt, row.EndedAt, row.Count,
            AlertPlainText.Summarise(row.Kind, values),
            row.Summary,
            values,
            row.AcknowledgedAt is { } at ? new AlertAcknowledgement(at, row.AcknowledgedByKeyId, row.AcknowledgedByLabel ?? string.Empty) : null,
            row.VehicleId is { } vehicle ? LinksOf(vehicle, row.StartedAt, row.EndedAt) : null,
            withCaution ? Http.LocationCaution.Text : null);
    }

    private static AlertLinks LinksOf(string vehicle, DateTimeOffset startedAt, DateTimeOffset? endedAt)
    {
        static string Time(DateTimeOffset t) => t.UtcDateTime.ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", System.Globalization.CultureInfo.InvariantCulture);
        string path = "/v1/vehicles/" + Uri.EscapeDataString(vehicle);
        var from = startedAt - Margin;
        var to = (endedAt ?? startedAt) + Margin;
        if (to - from > TimeSpan.FromHours(24))
        {
            to = from + TimeSpan.FromHours(24);
        }

        return new AlertLinks(
            startedAt,
            path + "/track?from=" + Time(from) + "&to=" + Time(to) + "&kind=smoothed",
            path + "/explain?time=" + Time(startedAt),
            path + "/state");
    }
}
