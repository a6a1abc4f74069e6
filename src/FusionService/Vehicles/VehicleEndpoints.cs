// Reading the fused states of the caller's fleet.
using FusionService.Alerts;
using FusionService.Database;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Models;
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Security;
using FusionService.Storage.Fleets;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Vehicles;
using FusionService.Tracking;
using System.Globalization;
using FusionService.Http;
using FusionService.Ingest;
using FusionService.Operations;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.Options;

namespace FusionService.Vehicles;

/// <summary>Maps <c>GET /v1/vehicles</c> and <c>GET /v1/vehicles/{vehicle}/state</c>.</summary>
public static class VehicleEndpoints
{
    private const double RadToDeg = 180.0 / Math.PI;

    /// <summary>A vehicle counts as moving from this estimated speed on (1.8 km/h, walking pace; a design choice).</summary>
    internal const double MovingMinSpeedMps = 0.5;

    private const int DefaultPageSize = 200;

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
            .WithResponseExample(200, "vehicles.json")
            .WithSummary("Where each vehicle is and how fresh that is")
            .WithDescription("The newest estimate of each vehicle of the caller's fleet with its age, when the service last heard "
                + "from the vehicle and from each of its sensors, its status (moving, stopped, silent or carried) and its open "
                + "alerts, ordered by vehicle id. The estimate is written by the tracks in the background, so it may lag the newest "
                + "measurement by a fraction of a second. Filters: status (comma-separated), open_alerts=true|false; silent_after_s overrides the service's silence limit "
                + "(Alerts:SilentAfterS, default 120 s) for this request, and silent_after_s in the answer says which limit applied. Paging: "
                + "limit (default 200) and after=<next_after of the previous page>. Example: GET /v1/vehicles?status=silent,stopped"
                + "&open_alerts=true&limit=50. 400 names the bad parameter. Needs a read or admin key." + Caution + LocationCaution.Documentation)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .RetryOnStaleConnection();
        group.MapGet("/{vehicle}/state", GetVehicleState)
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("GetVehicleState")
            .WithResponseExample(200, "vehicle-state.json")
            .WithSummary("Where one vehicle is now, with its uncertainty")
            .WithDescription("Position, heading (course, clockwise from north), speed, yaw rate, wheel-speed scale and gyro bias with "
                + "their standard deviations, the 95 % error ellipse and the time of the newest measurement per sensor. "
                + "404 when the caller's fleet has no such vehicle or it has no position yet. Needs a read or admin key." + Caution + LocationCaution.Documentation)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound)
            .RetryOnStaleConnection();
        return app;
    }

    /// <summary>Handles <c>GET /v1/vehicles</c>.</summary>
    internal static async Task<Results<Ok<VehicleListResponse>, ProblemHttpResult>> ListVehicles(
        HttpContext http, FusionDatabase database, TimeProvider clock, IOptions<AlertOptions> alertOptions,
        string? status = null, string? open_alerts = null, string? silent_after_s = null, string? after = null, string? limit = null)
    {
        var caller = ApiCaller.Of(http);
        List<string>? statuses = null;
        if (status is not null)
        {
            statuses = [.. status.Split(',', StringSplitOptions.TrimEntries | StringSplitOptions.RemoveEmptyEntries)];
            if (statuses.Count == 0 || statuses.Any(s => !FleetVehicleRepository.Statuses.Contains(s, StringComparer.Ordinal)))
            {
                return BadRequest("status: must be one or more of " + string.Join(", ", FleetVehicleRepository.Statuses) + ", comma-separated");
            }
        }

        if (open_alerts is not null and not "true" and not "false")
        {
            return BadRequest("open_alerts: must be true or false");
        }

        bool? withOpenAlerts = open_alerts is null ? null : open_alerts == "true";

        double silentAfterS = alertOptions.Value.SilentAfterS;
        if (silent_after_s is not null
            && (!double.TryParse(silent_after_s, NumberStyles.Float, CultureInfo.InvariantCulture, out silentAfterS) || !(silentAfterS >= 10 && silentAfterS <= 86_400)))
        {
            return BadRequest("silent_after_s: must be a number of seconds from 10 to 86400");
        }

        if (after is not null && !TelemetryMessageParser.IsValidVehicleId(after))
        {
            return BadRequest("after: " + TelemetryMessageParser.VehicleIdRule);
        }

        int pageSize = DefaultPageSize;
        if (limit is not null && (!int.TryParse(limit, NumberStyles.Integer, CultureInfo.InvariantCulture, out pageSize) || pageSize < 1 || pageSize > 1000))
        {
            return BadRequest("limit: must be an integer from 1 to 1000");
        }

        var now = clock.GetUtcNow();
        var rows = await new FleetVehicleRepository(database.DataSource)
            .ListAsync(new FleetVehicleQuery(caller.FleetId, now, silentAfterS, MovingMinSpeedMps, statuses, withOpenAlerts, after, pageSize + 1), http.RequestAborted)
            .ConfigureAwait(false);
        var page = rows.Take(pageSize).Select(r => ToSummary(r, now)).ToList();
        LocationCaution.AddHeader(http);
        return TypedResults.Ok(new VehicleListResponse(page, now, silentAfterS, rows.Count > pageSize ? page[^1].Vehicle : null, LocationCaution.Text));
    }

    private static VehicleSummary ToSummary(FleetVehicleRow r, DateTimeOffset now)
    {
        DateTimeOffset? At(DateTime? utc) => utc is { } t ? new DateTimeOffset(t, TimeSpan.Zero) : null;
        var time = ToTime(r.TimeUs);
        var received = At(r.LastReceivedAt);
        return new VehicleSummary(
            r.VehicleId,
            time,
            r.LatDeg,
            r.LonDeg,
            TrackProcessor.HeadingToCourse(r.HeadingRad) * RadToDeg,
            r.SpeedMps,
            new ErrorEllipseResponse(r.EllipseMajorM, r.EllipseMinorM, r.EllipseOrientationRad * RadToDeg),
            r.Status,
            Math.Round((now - time).TotalSeconds, 3),
            received,
            received is { } at ? Math.Round((now - at).TotalSeconds, 3) : null,
            new SensorReceiptsResponse(At(r.GnssReceivedAt), At(r.WheelReceivedAt), At(r.ImuReceivedAt)),
            (int)r.OpenAlerts,
            (int)r.UnresolvedAlerts);
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
        if (snapshot is null)
        {
            return NotFound("vehicle: '" + vehicle + "' has no position estimate yet");
        }

        LocationCaution.AddHeader(http);
        return TypedResults.Ok(ToResponse(vehicle, snapshot));
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
            s.Resets,
            new GnssErrorModelResponse(s.GnssCorrelatedShare, s.GnssErrorTimeConstantS, s.GnssErrorFitted, s.GnssErrorStartedFrom),
            LocationCaution.Text);
    }

    private static DateTimeOffset ToTime(long timeUs) => UnixMicroseconds.ToDateTimeOffset(timeUs);

    private static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(title: "Invalid request", detail: detail, statusCode: StatusCodes.Status400BadRequest);

    private static ProblemHttpResult NotFound(string detail) =>
        TypedResults.Problem(title: "Not found", detail: detail, statusCode: StatusCodes.Status404NotFound);
}
