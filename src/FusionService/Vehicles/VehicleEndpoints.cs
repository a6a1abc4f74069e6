// Reading the fused states of the caller's fleet.
using FusionService.Database;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Security;
using FusionService.Storage.Fleets;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Vehicles;
using FusionService.Tracking;
using Microsoft.AspNetCore.Http.HttpResults;

namespace FusionService.Vehicles;

/// <summary>Maps <c>GET /v1/vehicles</c> and <c>GET /v1/vehicles/{vehicle}/state</c>.</summary>
public static class VehicleEndpoints
{
    private const double RadToDeg = 180.0 / Math.PI;

    private const string Caution =
        " Values are estimates with the stated uncertainty: not for safety-critical navigation or collision avoidance."
        + " Vehicle locations reveal where drivers are and are personal data: restrict read keys accordingly.";

    /// <summary>Maps the vehicle endpoints.</summary>
    public static IEndpointRouteBuilder MapVehicleEndpoints(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/v1/vehicles").WithTags("Vehicles");
        group.MapGet("/", ListVehicles)
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("ListVehicles")
            .WithSummary("Latest fused state of every vehicle")
            .WithDescription("The latest stored fused state of each vehicle of the caller's fleet (written by the tracks in the "
                + "background, so it may lag the newest measurement by a fraction of a second). Needs a read or admin key." + Caution)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        group.MapGet("/{vehicle}/state", GetVehicleState)
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("GetVehicleState")
            .WithSummary("Current fused state of one vehicle")
            .WithDescription("Position, heading (course, clockwise from north), speed, yaw rate, wheel-speed scale and gyro bias with "
                + "their standard deviations, the 95 % error ellipse and the time of the newest measurement per sensor. "
                + "404 when the caller's fleet has no such vehicle or it has no position yet. Needs a read or admin key." + Caution)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }

    /// <summary>Handles <c>GET /v1/vehicles</c>.</summary>
    internal static async Task<Ok<VehicleListResponse>> ListVehicles(HttpContext http, FusionDatabase database)
    {
        var caller = ApiCaller.Of(http);
        var rows = await new FusedStateRepository(database.DataSource).LatestFusedStatesAsync(caller.FleetId, http.RequestAborted).ConfigureAwait(false);
        var list = rows
            .OrderBy(r => r.VehicleId, StringComparer.Ordinal)
            .Select(r => new VehicleSummary(
                r.VehicleId,
                ToTime(r.TimeUs),
                r.LatDeg,
                r.LonDeg,
                TrackProcessor.HeadingToCourse(r.HeadingRad) * RadToDeg,
                r.SpeedMps,
                new ErrorEllipseResponse(r.EllipseMajorM, r.EllipseMinorM, r.EllipseOrientationRad * RadToDeg)))
            .ToList();
        return TypedResults.Ok(new VehicleListResponse(list));
    }

    /// <summary>Handles <c>GET /v1/vehicles/{vehicle}/state</c>.</summary>
    internal static async Task<Results<Ok<VehicleStateResponse>, ProblemHttpResult>> GetVehicleState(
        string vehicle, HttpContext http, FusionDatabase database, IGrainFactory grains)
    {
        var caller = ApiCaller.Of(http);
        if (vehicle.Length > 128 || vehicle.Contains('/', StringComparison.Ordinal)
            || !await new VehicleRepository(database.DataSource).ExistsAsync(caller.FleetId, vehicle, http.RequestAborted).ConfigureAwait(false))
        {
            return NotFound("vehicle: no vehicle '" + vehicle + "' in this fleet");
        }

        var snapshot = await grains.GetGrain<IVehicleTrackGrain>(GrainKeys.Of(caller.FleetId, vehicle)).GetStateAsync().ConfigureAwait(false);
        return snapshot is null
            ? NotFound("vehicle: '" + vehicle + "' has no position estimate yet")
            : TypedResults.Ok(ToResponse(vehicle, snapshot));
    }

    /// <summary>The response for a grain's snapshot.</summary>
    internal static VehicleStateResponse ToResponse(string vehicle, VehicleStateSnapshot s)
    {
        double Sd(int i) => Math.Sqrt(Math.Max(0, s.Covariance[(i * StateIndex.Count) + i]));
        double P(int i, int j) => s.Covariance[(i * StateIndex.Count) + j];
        var ellipse = ErrorEllipse.FromCovariance(P(StateIndex.EastM, StateIndex.EastM), P(StateIndex.NorthM, StateIndex.NorthM), P(StateIndex.EastM, StateIndex.NorthM));
        DateTimeOffset? At(int sensor) => s.LastTimeUsBySensor[sensor] is { } us ? ToTime(us) : null;
        return new VehicleStateResponse(
            vehicle,
            ToTime(s.TimeUs),
            s.Phase,
            s.LatDeg,
            s.LonDeg,
            Sd(StateIndex.EastM),
            Sd(StateIndex.NorthM),
            TrackProcessor.HeadingToCourse(s.State[StateIndex.HeadingRad]) * RadToDeg,
            Sd(StateIndex.HeadingRad) * RadToDeg,
            s.State[StateIndex.SpeedMps],
            Sd(StateIndex.SpeedMps),
            s.State[StateIndex.YawRateRps] * RadToDeg,
            Sd(StateIndex.YawRateRps) * RadToDeg,
            s.State[StateIndex.WheelScale],
            Sd(StateIndex.WheelScale),
            s.State[StateIndex.GyroBiasRps] * RadToDeg,
            Sd(StateIndex.GyroBiasRps) * RadToDeg,
            new ErrorEllipseResponse(ellipse.SemiMajorM, ellipse.SemiMinorM, ellipse.OrientationRad * RadToDeg),
            new SensorTimesResponse(At(0), At(1), At(2), At(3)),
            s.Resets);
    }

    private static DateTimeOffset ToTime(long timeUs) => DateTimeOffset.UnixEpoch.AddTicks(timeUs * 10);

    private static ProblemHttpResult NotFound(string detail) =>
        TypedResults.Problem(title: "Not found", detail: detail, statusCode: StatusCodes.Status404NotFound);
}
