// The endpoints' own summaries, descriptions and parameter texts in the OpenAPI document.
using System.Reflection;
using System.Text.Json.Serialization;
using Microsoft.AspNetCore.Http.Metadata;
using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;

namespace FusionService.Operations;

/// <summary>
/// Writes each operation's summary and description from the endpoint's own <c>WithSummary</c> / <c>WithDescription</c>
/// and a plain description for every parameter. The XML documentation generator of Microsoft.AspNetCore.OpenApi runs
/// first and writes a handler method's XML <c>summary</c> (a note for developers, "Handles ...") as the operation
/// summary; this transformer runs after it, so the text written for API users wins.
/// </summary>
public static class OpenApiText
{
    // Parameter texts by "path name" (most specific) or by name alone; paths as in the document.
    private static readonly Dictionary<string, string> Parameters = new(StringComparer.Ordinal)
    {
        ["vehicle"] = "Vehicle id within the caller's fleet (1-128 characters, no '/'). Another fleet's vehicle is answered 404.",
        ["from"] = "Start of the window, inclusive: RFC 3339 with an offset (2026-05-01T08:00:00Z; a '+' offset URL-encoded as %2B) or Unix milliseconds.",
        ["to"] = "End of the window, exclusive: RFC 3339 with an offset or Unix milliseconds.",
        ["/v1/vehicles/{vehicle}/track kind"] = "Which positions: raw (the GNSS fixes as received, with the filter's verdict), filtered (the live estimates) or smoothed (default; re-computed with every stored measurement, late ones included).",
        ["/v1/vehicles/{vehicle}/track step"] = "Keep at most one point per this many seconds (optional; all points when left out).",
        ["/v1/vehicles/{vehicle}/track format"] = "json (default), geojson, gpx or csv; wins over the Accept header.",
        ["/v1/vehicles/{vehicle}/explain time"] = "The instant to explain: RFC 3339 with an offset or Unix milliseconds.",
        ["/v1/vehicles/{vehicle}/explain window_s"] = "Seconds of measurements shown around the instant (default 10, at most Audit:MaxExplainWindowS, default 300).",
        ["/v1/vehicles status"] = "Only vehicles in these states, comma-separated: moving, stopped, silent, carried (see the status field). Default: all.",
        ["/v1/vehicles open_alerts"] = "true: only vehicles with at least one open (unacknowledged) alert; false: only vehicles without one. Default: all.",
        ["/v1/vehicles silent_after_s"] = "A vehicle counts as silent when nothing was received from it for more than this many seconds (server clock; 10-86400). Default: the service's silence limit, setting Alerts:SilentAfterS (120 unless configured), which the dashboard uses too.",
        ["/v1/vehicles after"] = "Paging: the next_after value of the previous page (a vehicle id); vehicles after it in id order are returned.",
        ["/v1/vehicles limit"] = "Most vehicles per page (1-1000, default 200).",
        ["/v1/base-layer days"] = "How many days back to read the fleet's estimates: a whole number from 1 to 31, default 7.",
        ["/v1/base-layer cell_m"] = "Side of a road square in metres: 5 to 100, default 10.",
        ["/v1/alerts state"] = "open (not yet acknowledged), acknowledged, resolved, or unresolved (open or acknowledged). Default: all.",
        ["/v1/alerts vehicle"] = "Only this vehicle's alerts.",
        ["/v1/alerts kind"] = "Only alerts of this kind: gated_burst, inconsistent_sensor, gnss_silent_while_moving, track_reset, wheel_scale_out_of_band, moved_without_driving, sensor_isolated, vehicle_silent or measurement_unusable.",
        ["/v1/alerts from"] = "Only alerts still active at or after this instant: RFC 3339 with an offset or Unix milliseconds.",
        ["/v1/alerts to"] = "Only alerts that started at or before this instant: RFC 3339 with an offset or Unix milliseconds.",
        ["/v1/alerts sort"] = "newest (default): newest start first; severity: critical before warning before info, newest start first within each.",
        ["/v1/alerts cursor"] = "Paging: the next_cursor value of the previous page, with the same filters and sort.",
        ["/v1/alerts limit"] = "Most alerts per page (1-1000, default 100).",
        ["/v1/alerts/{id}/acknowledge id"] = "The alert's id (from GET /v1/alerts).",
        ["id"] = "The webhook subscription's id (from POST /v1/webhooks or GET /v1/webhooks).",
        ["/v1/webhooks/{id}/dead-letters limit"] = "Most dead letters returned, newest first (1-1000, default 100).",
        ["bbox"] = "Only vehicles inside this box: west,south,east,north in WGS-84 degrees (optional; the whole fleet when left out).",
        ["min_interval_ms"] = "Least time between two updates of the same vehicle, milliseconds (optional).",
    };

    /// <summary>The operation transformer: the endpoint's own summary and description, and the parameter texts.</summary>
    public static Task ApplyAsync(OpenApiOperation operation, OpenApiOperationTransformerContext context, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(operation);
        ArgumentNullException.ThrowIfNull(context);
        var metadata = context.Description.ActionDescriptor.EndpointMetadata;
        if (metadata.OfType<IEndpointSummaryMetadata>().LastOrDefault() is { } summary)
        {
            operation.Summary = summary.Summary;
        }

        if (metadata.OfType<IEndpointDescriptionMetadata>().LastOrDefault() is { } description)
        {
            operation.Description = description.Description;
        }

        string path = "/" + (context.Description.RelativePath ?? string.Empty).Split('?')[0].TrimEnd('/');
        foreach (var parameter in operation.Parameters ?? [])
        {
            if (parameter is OpenApiParameter concrete && concrete.Name is { } name
                && (Parameters.TryGetValue(path + " " + name, out var text) || Parameters.TryGetValue(name, out text)))
            {
                concrete.Description = text;
            }
        }

        return Task.CompletedTask;
    }

    /// <summary>
    /// The schema transformer: a member that may be null is not listed as required, because the service leaves out null
    /// members (<c>JsonIgnoreCondition.WhenWritingNull</c>) unless the member says it is always written.
    /// </summary>
    public static Task OmittedNullsAsync(OpenApiSchema schema, OpenApiSchemaTransformerContext context, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(schema);
        ArgumentNullException.ThrowIfNull(context);
        if (schema.Required is not { Count: > 0 } required)
        {
            return Task.CompletedTask;
        }

        var nullability = new NullabilityInfoContext();
        foreach (var property in context.JsonTypeInfo.Properties)
        {
            bool alwaysWritten = property.AttributeProvider?.GetCustomAttributes(typeof(JsonIgnoreAttribute), true)
                .OfType<JsonIgnoreAttribute>().Any(a => a.Condition == JsonIgnoreCondition.Never) == true;
            bool mayBeNull = Nullable.GetUnderlyingType(property.PropertyType) is not null
                || (property.AttributeProvider is PropertyInfo info && nullability.Create(info).ReadState == NullabilityState.Nullable);
            if (mayBeNull && !alwaysWritten)
            {
                required.Remove(property.Name);
            }
        }

        return Task.CompletedTask;
    }
}
