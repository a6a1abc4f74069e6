// The WebSocket stream of fused positions.
using System.Globalization;
using FusionService.Security;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.HttpResults;

namespace FusionService.Live;

/// <summary>Maps the WebSocket <c>/v1/positions/stream</c>.</summary>
public static class LiveEndpoints
{
    /// <summary>Maps the live endpoints.</summary>
    public static IEndpointRouteBuilder MapLiveEndpoints(this IEndpointRouteBuilder app)
    {
        app.MapGet("/v1/positions/stream", StreamPositions)
            .WithTags("Live")
            .RequireStreamKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("StreamPositions")
            .WithSummary("Stream fused positions over a WebSocket")
            .WithDescription("Open a WebSocket with 'Authorization: Bearer <read key>' or, from a browser, the subprotocols "
                + "'fusion.v1, fusion.key.<read key>'. Each text frame is the newest fused position of one vehicle of the caller's fleet "
                + "{\"vehicle\",\"time\",\"lat_deg\",\"lon_deg\",\"heading_deg\" (clockwise from north),\"speed_mps\",\"ellipse95\"}, sent "
                + "after each batch the vehicle's track processed. Query: bbox=min_lon,min_lat,max_lon,max_lat (degrees; only positions "
                + "inside), min_interval_ms (0-3600000, default 1000: per vehicle at most one frame per that much data time). "
                + "Positions are estimates: not for safety-critical navigation or collision avoidance; they are personal data."
                + FusionService.Http.LocationCaution.Documentation)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        return app;
    }

    /// <summary>Handles the WebSocket <c>/v1/positions/stream</c>.</summary>
    internal static async Task<IResult> StreamPositions(HttpContext http, LiveHub hub, string? bbox = null, string? min_interval_ms = null)
    {
        BoundingBox? box = null;
        if (bbox is not null)
        {
            if (!BoundingBox.TryParse(bbox, out var parsed, out string error))
            {
                return BadRequest(error);
            }

            box = parsed;
        }

        int intervalMs = 1000;
        if (min_interval_ms is not null
            && (!int.TryParse(min_interval_ms, NumberStyles.Integer, CultureInfo.InvariantCulture, out intervalMs) || intervalMs < 0 || intervalMs > 3_600_000))
        {
            return BadRequest("min_interval_ms: must be an integer from 0 to 3600000");
        }

        if (!http.WebSockets.IsWebSocketRequest)
        {
            return BadRequest("connection: this endpoint accepts WebSocket upgrades only");
        }

        var caller = ApiCaller.Of(http);
        FusionService.Http.LocationCaution.AddHeader(http);
        using var subscription = hub.SubscribePositions(caller.FleetId, box, intervalMs);
        using var socket = await http.WebSockets.AcceptWebSocketAsync(WebSocketKeyAuthentication.AcceptContext(http)).ConfigureAwait(false);
        using var keyWatch = http.RequestServices.GetRequiredService<StreamKeyWatch>().Watch(caller);
        await LiveStreaming.PumpAsync(socket, subscription.Reader, http.RequestAborted, keyWatch.Token).ConfigureAwait(false);
        return TypedResults.Empty;
    }

    private static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(title: "Invalid request", detail: detail, statusCode: StatusCodes.Status400BadRequest);
}
