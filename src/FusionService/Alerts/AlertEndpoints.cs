// Alerts, alert rules and the alert stream of the caller's fleet.
using System.Text.Json;
using FusionService.Database;
using FusionService.Live;
using FusionService.Security;
using FusionService.Storage.Alerts;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.HttpResults;
using FusionService.Http;
using FusionService.Ingest;

using FusionService.Operations;

namespace FusionService.Alerts;

/// <summary>Maps <c>/v1/alerts</c>, <c>/v1/alerts/{id}/acknowledge</c>, <c>/v1/alert-rules</c> and the WebSocket <c>/v1/alerts/stream</c>.</summary>
public static class AlertEndpoints
{
    private const string Caution =
        " Alerts are derived from estimates and can be wrong both ways: do not use them for safety-critical decisions."
        + " They describe where vehicles and their drivers were: personal data.";

    private static readonly string[] States = ["open", "acknowledged", "resolved", "unresolved"];

    /// <summary>Maps the alert endpoints.</summary>
    public static IEndpointRouteBuilder MapAlertEndpoints(this IEndpointRouteBuilder app)
    {
        var alerts = app.MapGroup("/v1/alerts").WithTags("Alerts");
        alerts.MapGet("/", ListAlerts)
            .WithResponseExample(200, "alerts.json")
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("ListAlerts")
            .WithSummary("What needs attention in the fleet")
            .WithDescription("Alerts of the caller's fleet, newest start first, or with sort=severity critical first, then warning, "
                + "then info, newest start first within each. Each alert has a plain-language summary, the rule's technical_summary "
                + "with the numbers behind it, who acknowledged it and when, and links to the van at the alert's time. "
                + "Filters: state (open = not yet acknowledged, acknowledged, resolved, unresolved = open or acknowledged), vehicle, "
                + "kind (gated_burst, inconsistent_sensor, gnss_silent_while_moving, track_reset, wheel_scale_out_of_band, "
                + "moved_without_driving, sensor_isolated, vehicle_silent, measurement_unusable), from/to (RFC 3339 or Unix milliseconds: alerts still active "
                + "at or after from and started at or before to). Paging: limit (1-1000, default 100) and cursor=<next_cursor of the "
                + "previous page>, with the same filters and sort. Example: GET /v1/alerts?state=unresolved&sort=severity&limit=20. "
                + "400 names the bad parameter. Needs a read or admin key." + Caution + LocationCaution.Documentation)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .RetryOnStaleConnection();
        alerts.MapPost("/{id}/acknowledge", AcknowledgeAlert)
            .WithResponseExample(200, "alert-acknowledged.json")
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("AcknowledgeAlert")
            .WithSummary("Acknowledge an alert")
            .WithDescription("Marks an open alert acknowledged and returns it with 'acknowledged': {at, key_id, key_label} naming the key "
                + "that did it (an acknowledged or resolved alert is returned unchanged). 404 for an unknown id or another fleet's alert. "
                + "Needs an admin key: a read key can see alerts but not acknowledge them (403).")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        alerts.MapGet("/stream", StreamAlerts)
            .RequireStreamKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("StreamAlerts")
            .WithSummary("Stream new and changed alerts over a WebSocket")
            .WithDescription("Open a WebSocket with 'Authorization: Bearer <read key>' or, from a browser, the subprotocols "
                + "'fusion.v1, fusion.key.<read key>' (the server selects fusion.v1). Each new or changed alert of the caller's fleet "
                + "arrives as one JSON alert per text frame, as in GET /v1/alerts. Frames are dropped (oldest first) for a client "
                + "that reads too slowly." + Caution)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);

        var rules = app.MapGroup("/v1/alert-rules").WithTags("Alerts");
        rules.MapGet("/", GetAlertRules)
            .WithResponseExample(200, "alert-rules.json")
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("GetAlertRules")
            .WithSummary("The fleet's alert thresholds")
            .WithDescription("Thresholds of every alert rule of the caller's fleet (defaults unless set). Needs a read or admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .RetryOnStaleConnection();
        rules.MapPut("/", PutAlertRules)
            .WithRequestExample("alert-rules.json")
            .WithResponseExample(200, "alert-rules.json")
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("PutAlertRules")
            .WithSummary("Set the fleet's alert thresholds")
            .WithDescription("Replaces the thresholds; rules or fields left out take their defaults. 400 names the first invalid field, "
                + "e.g. 'gated_burst.window_s: must be a number from 1 to 3600'. Example body: "
                + "{\"gated_burst\":{\"window_s\":20,\"min_count\":4},\"vehicle_silent\":{\"silent_s\":600}}. Needs an admin key.")
            .Accepts<AlertRuleSettings>("application/json")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        return app;
    }

    /// <summary>Handles <c>GET /v1/alerts</c>.</summary>
    internal static async Task<Results<Ok<AlertListResponse>, ProblemHttpResult>> ListAlerts(
        HttpContext http, FusionDatabase database, string? state = null, string? vehicle = null, string? kind = null, string? from = null, string? to = null,
        string? limit = null, string? sort = null, string? cursor = null)
    {
        var caller = ApiCaller.Of(http);
        if (state is not null && !States.Contains(state, StringComparer.Ordinal))
        {
            return BadRequest("state: must be one of open, acknowledged, resolved, unresolved");
        }

        // Checked here, not left to the query: PostgreSQL refuses text with a NUL character (%00), which made a 500.
        if (vehicle is not null && !TelemetryMessageParser.IsValidVehicleId(vehicle))
        {
            return BadRequest("vehicle: " + TelemetryMessageParser.VehicleIdRule);
        }

        if (kind is not null && !AlertKinds.All.Contains(kind, StringComparer.Ordinal))
        {
            return BadRequest("kind: must be one of " + string.Join(", ", AlertKinds.All));
        }

        DateTimeOffset? fromTime = null, toTime = null;
        if (from is not null)
        {
            if (QueryTime.Check(from, out long fromUs) is { } fromProblem)
            {
                return BadRequest("from: " + fromProblem);
            }

            fromTime = QueryTime.ToTime(fromUs);
        }

        if (to is not null)
        {
            if (QueryTime.Check(to, out long toUs) is { } toProblem)
            {
                return BadRequest("to: " + toProblem);
            }

            toTime = QueryTime.ToTime(toUs);
        }

        if (fromTime > toTime)
        {
            return BadRequest("to: must not be before from");
        }

        int count = 100;
        if (limit is not null && (!int.TryParse(limit, System.Globalization.NumberStyles.Integer, System.Globalization.CultureInfo.InvariantCulture, out count) || count < 1 || count > 1000))
        {
            return BadRequest("limit: must be an integer from 1 to 1000");
        }

        if (sort is not null and not "newest" and not "severity")
        {
            return BadRequest("sort: must be newest or severity");
        }

        AlertPosition? after = null;
        if (cursor is not null && (after = AlertCursor.Decode(cursor)) is null)
        {
            return BadRequest("cursor: not a cursor of this list; pass next_cursor of the previous page unchanged");
        }

        bool severityFirst = sort == "severity";
        var rows = await new AlertRepository(database.DataSource)
            .ListAsync(new AlertQuery(caller.FleetId, state, vehicle, kind, fromTime, toTime, count + 1, severityFirst, after), http.RequestAborted).ConfigureAwait(false);
        var page = rows.Take(count).ToList();
        string? next = rows.Count > count
            ? AlertCursor.Encode(new AlertPosition(AlertRepository.SeverityRank(page[^1].Severity), page[^1].StartedAt, page[^1].AlertId))
            : null;
        LocationCaution.AddHeader(http);
        return TypedResults.Ok(new AlertListResponse([.. page.Select(r => AlertResponse.From(r))], next, LocationCaution.Text));
    }

    /// <summary>Handles <c>POST /v1/alerts/{id}/acknowledge</c>.</summary>
    internal static async Task<Results<Ok<AlertResponse>, ProblemHttpResult>> AcknowledgeAlert(
        string id, HttpContext http, FusionDatabase database, AlertPublisher publisher)
    {
        var caller = ApiCaller.Of(http);
        if (!Guid.TryParse(id, out var alertId))
        {
            return NotFound(id);
        }

        var changed = await new AlertRepository(database.DataSource).AcknowledgeAsync(caller.FleetId, alertId, caller.KeyId, http.RequestAborted).ConfigureAwait(false);
        if (changed is null)
        {
            // Already acknowledged or resolved (possibly by a concurrent request): answered unchanged.
            var now = await new AlertRepository(database.DataSource).GetAsync(caller.FleetId, alertId, http.RequestAborted).ConfigureAwait(false);
            return now is null ? NotFound(id) : TypedResults.Ok(AlertResponse.From(now));
        }

        publisher.Publish([changed]);
        return TypedResults.Ok(AlertResponse.From(changed));
    }

    /// <summary>Handles <c>GET /v1/alert-rules</c>.</summary>
    internal static async Task<Ok<AlertRuleSettings>> GetAlertRules(HttpContext http, AlertRuleCache rules)
    {
        var caller = ApiCaller.Of(http);
        return TypedResults.Ok(await rules.GetAsync(caller.FleetId, http.RequestAborted).ConfigureAwait(false));
    }

    /// <summary>Handles <c>PUT /v1/alert-rules</c>.</summary>
    internal static async Task<Results<Ok<AlertRuleSettings>, ProblemHttpResult>> PutAlertRules(HttpContext http, FusionDatabase database, AlertRuleCache rules)
    {
        var caller = ApiCaller.Of(http);
        AlertRuleSettings? settings;
        try
        {
            settings = await JsonSerializer.DeserializeAsync<AlertRuleSettings>(http.Request.Body, AlertJson.StrictOptions, http.RequestAborted).ConfigureAwait(false);
        }
        catch (JsonException ex)
        {
            return BadRequest("body: not a valid rule settings document" + (ex.Path is { } path ? " at " + path : string.Empty) + ": " + ex.Message.Split('.')[0]);
        }

        if (settings is null)
        {
            return BadRequest("body: must be a JSON object");
        }

        if (settings.Validate() is { } problem)
        {
            return BadRequest(problem);
        }

        await new AlertRuleRepository(database.DataSource).PutAsync(caller.FleetId, JsonSerializer.Serialize(settings, AlertJson.Options), http.RequestAborted).ConfigureAwait(false);
        rules.Set(caller.FleetId, settings);
        return TypedResults.Ok(settings);
    }

    /// <summary>Handles the WebSocket <c>/v1/alerts/stream</c>.</summary>
    internal static async Task<IResult> StreamAlerts(HttpContext http, LiveHub hub)
    {
        if (!http.WebSockets.IsWebSocketRequest)
        {
            return BadRequest("connection: this endpoint accepts WebSocket upgrades only");
        }

        var caller = ApiCaller.Of(http);
        using var subscription = hub.SubscribeAlerts(caller.FleetId);
        using var socket = await http.WebSockets.AcceptWebSocketAsync(WebSocketKeyAuthentication.AcceptContext(http)).ConfigureAwait(false);
        using var keyWatch = http.RequestServices.GetRequiredService<StreamKeyWatch>().Watch(caller);
        await LiveStreaming.PumpAsync(socket, subscription.Reader, http.RequestAborted, keyWatch.Token).ConfigureAwait(false);
        return TypedResults.Empty;
    }

    private static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(title: "Invalid request", detail: detail, statusCode: StatusCodes.Status400BadRequest);

    private static ProblemHttpResult NotFound(string id) =>
        TypedResults.Problem(title: "Not found", detail: "id: no alert '" + id + "' in this fleet", statusCode: StatusCodes.Status404NotFound);
}
