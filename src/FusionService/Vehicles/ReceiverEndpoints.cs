// What the fleet's GNSS receivers have fitted, and where a new vehicle's receiver fit starts.
using FusionService.Database;
using FusionService.Estimation.Models;
using FusionService.Operations;
using FusionService.Security;
using FusionService.Storage.Fleets;
using FusionService.Storage.Vehicles;
using FusionService.Tracking;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.Options;

namespace FusionService.Vehicles;

/// <summary>Maps <c>GET /v1/fleet/receivers</c>.</summary>
public static class ReceiverEndpoints
{
    /// <summary>Maps the fleet's receiver summary.</summary>
    public static IEndpointRouteBuilder MapReceiverEndpoints(this IEndpointRouteBuilder app)
    {
        app.MapGroup("/v1/fleet").WithTags("Vehicles").MapGet("/receivers", GetFleetReceivers)
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("GetFleetReceivers")
            .WithResponseExample(200, "fleet-receivers.json")
            .WithSummary("What the fleet's GNSS receivers have fitted")
            .WithDescription("Each track fits its GNSS receiver's error model (the share of the reported accuracy's variance that is "
                + "correlated in time, and its time constant) from the fixes the vehicle reports while it stands. This answer "
                + "summarises the fits of the caller's fleet: how many vehicles have one, how many rest on enough evidence of "
                + "their own to count (min_long_lag_terms long-lag terms, about ten minutes of standing), the median and the "
                + "10th-90th percentile of each quantity over those, and the pair a vehicle the fleet has not had before starts "
                + "from now: the medians once min_vehicles vehicles count (`GnssErrorModel:FleetStartMinVehicles`), else the "
                + "settings of section `GnssErrorModel`. A vehicle's start is decided once, before its first measurement is filtered; its state "
                + "(gnss_error_model.started_from) says which it got. A fleet whose receivers are of one model can also set the "
                + "medians in section `GnssErrorModel`. The fits describe receivers, not positions; they are estimates. "
                + "Needs a read or admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .RetryOnStaleConnection();
        return app;
    }

    /// <summary>Handles <c>GET /v1/fleet/receivers</c>.</summary>
    internal static async Task<Ok<FleetReceiversResponse>> GetFleetReceivers(
        HttpContext http, FusionDatabase database, IOptions<GnssErrorModelOptions> gnssErrorModel)
    {
        var caller = ApiCaller.Of(http);
        var model = gnssErrorModel.Value;
        var summary = await new ReceiverFitRepository(database.ReadDataSource)
            .SummaryAsync(caller.FleetId, GnssErrorVariogram.PriorLongPairs, http.RequestAborted).ConfigureAwait(false);
        int minVehicles = model.FitPerVehicle ? model.FleetStartMinVehicles : 0;
        var start = minVehicles > 0 && summary.Counted >= minVehicles && summary is { MedianShare: double share, MedianTimeConstantS: double tauS }
            ? new ReceiverStartResponse(share, tauS, "fleet")
            : new ReceiverStartResponse(model.CorrelatedShare, model.TimeConstantS, "settings");
        return TypedResults.Ok(new FleetReceiversResponse(
            summary.Fitted,
            summary.Counted,
            GnssErrorVariogram.PriorLongPairs,
            minVehicles,
            Spread(summary.MedianShare, summary.ShareP10, summary.ShareP90),
            Spread(summary.MedianTimeConstantS, summary.TimeConstantP10S, summary.TimeConstantP90S),
            start,
            summary.StartedFromFleet));
    }

    private static ReceiverSpreadResponse? Spread(double? median, double? p10, double? p90) =>
        median is { } m && p10 is { } lo && p90 is { } hi ? new ReceiverSpreadResponse(m, lo, hi) : null;
}
