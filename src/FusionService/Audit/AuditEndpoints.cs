// GET /v1/vehicles/{vehicle}/diagnostics and /explain: the numbers behind a vehicle's estimates.
using System.Globalization;
using FusionService.Database;
using FusionService.Estimation.Tracking;
using FusionService.Security;
using FusionService.Storage.Audit;
using FusionService.Storage.Checkpoints;
using FusionService.Storage.Fleets;
using FusionService.Storage.Vehicles;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.Options;

using FusionService.Http;
using FusionService.History;

using FusionService.Operations;

namespace FusionService.Audit;

/// <summary>Maps the diagnostics and explanation endpoints.</summary>
public static class AuditEndpoints
{
    private const string TimeFormats = "RFC 3339 with an offset (a '+' offset URL-encoded as %2B) or Unix milliseconds";

    /// <summary>Maps <c>GET /v1/vehicles/{vehicle}/diagnostics</c> and <c>GET /v1/vehicles/{vehicle}/explain</c>.</summary>
    public static IEndpointRouteBuilder MapAuditEndpoints(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/v1/vehicles").WithTags("Audit");
        group.MapGet("/{vehicle}/diagnostics", GetDiagnostics)
            .WithResponseExample(200, "diagnostics.json")
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .AdmitAsHeavyRead()
            .WithName("GetVehicleDiagnostics")
            .WithSummary("Sensor verdicts, NIS consistency, innovation whiteness, calibration and GNSS outages of one vehicle")
            .WithDescription(
                "Query: from, to (" + TimeFormats + "; measurement time, [from, to), at most Audit:MaxDiagnosticsWindowHours, default 24 h). "
                + "Per sensor (gnss_position, gnss_velocity, wheel, imu): counts accepted, gated, duplicate (per UTC day of measurement "
                + "time, over the whole days the window touches) and too_late; the mean NIS of the fused measurements with the two-sided "
                + "95 % chi-square interval for the mean of N values of dimension m, [chi2(0.025; N m), chi2(0.975; N m)] / N, and the "
                + "nis_verdict consistent | too_optimistic (mean above: stated accuracies too small) | too_pessimistic | insufficient_data "
                + "(fewer than Audit:NisMinimumCount, default 10); whiteness: per component of the whitened innovation w = L^-1 nu "
                + "(S = L L^T) of the fused measurements, in time order, the sample autocorrelations r(1..h) about zero (h = "
                + "Audit:WhitenessLags, default 10, in measurements of that sensor), the 95 % band 1.96/sqrt(N), the Ljung-Box "
                + "Q = N (N + 2) sum r(k)^2 / (N - k) against the chi-square critical value with h dof at 0.05 divided by the number "
                + "of components, and white | correlated | insufficient_data (fewer than Audit:WhitenessMinimumCount, default 50); "
                + "verdict: nis_verdict, except correlated when the mean NIS is consistent (or too few) but the innovations are "
                + "correlated (a mean NIS cannot see correlation); arrival latency percentiles p50/p95/p99 of received_at - measured_at in ms. "
                + "Calibration: wheel-speed scale and gyro bias (deg/s) with standard deviations from the newest fused state in the window. "
                + "gnss_outages: gaps between consecutive GNSS position fixes longer than Audit:GnssOutageMinGapS (default 5 s) during which "
                + "a fused speed reached Audit:MovingSpeedMps (default 1 m/s). track_resets: fixes that re-initialised the track. "
                + "404 when the caller's fleet has no such vehicle; 400 names the bad parameter. Needs a read or admin key. "
                + "Estimates, not for safety-critical navigation; locations are the drivers' personal data.")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        group.MapGet("/{vehicle}/explain", GetExplanation)
            .WithResponseExample(200, "explain.json")
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .AdmitAsHeavyRead()
            .WithName("ExplainVehicleState")
            .WithSummary("Why the estimate of one vehicle at one instant is what it is")
            .WithDescription(
                "Query: time (" + TimeFormats + "), window_s (seconds, default 10, at most Audit:MaxExplainWindowS, default 300). "
                + "Re-processes the stored measurements from the newest filter checkpoint before the window (without one, from the first "
                + "stored measurement at most Audit:MaxReplayHours, default 12 h, before it; replay.exact says whether that saw everything "
                + "the live track saw) and returns the fused state after the last measurement at or before time, and every measurement of "
                + "[time - window_s/2, time + window_s/2] with its values, residual (measured minus predicted, units in residual_units), NIS, "
                + "its dimension, the gate threshold, the decision (accepted | gated | too_late | track_reset | initialising | before_start | "
                + "unused | unusable) and position_shift_m, how far the update moved the position estimate (|posterior - prior| in the local plane, "
                + "metres; 0 when gated). 404 when the caller's fleet has no such vehicle; 400 names the bad parameter. Needs a read or admin key. "
                + "Estimates, not for safety-critical navigation; locations are the drivers' personal data.")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }

    /// <summary>Handles <c>GET /v1/vehicles/{vehicle}/diagnostics</c>.</summary>
    internal static async Task<Results<Ok<DiagnosticsResponse>, ProblemHttpResult>> GetDiagnostics(
        string vehicle, string? from, string? to, HttpContext http, FusionDatabase database, TrackProcessor processor, IOptions<AuditOptions> options)
    {
        var caller = ApiCaller.Of(http);
        var settings = options.Value;
        if (QueryTime.Check(from, out long fromUs) is { } fromProblem)
        {
            return BadRequest("from", fromProblem);
        }

        if (QueryTime.Check(to, out long toUs) is { } toProblem)
        {
            return BadRequest("to", toProblem);
        }

        if (toUs <= fromUs)
        {
            return BadRequest("to", "must be later than from");
        }

        if (toUs - fromUs > settings.MaxDiagnosticsWindowHours * 3600e6)
        {
            return BadRequest("to", string.Create(CultureInfo.InvariantCulture, $"the window from..to is longer than the limit of {settings.MaxDiagnosticsWindowHours:0.###} h"));
        }

        if (!await VehicleExistsAsync(database, caller.FleetId, vehicle, http.RequestAborted).ConfigureAwait(false))
        {
            return NotFound(vehicle);
        }

        var report = await DiagnosticsReport.BuildAsync(
            new AuditRepository(database.ReadDataSource),
            new DuplicateCountRepository(database.ReadDataSource),
            processor,
            settings,
            caller.FleetId,
            vehicle,
            fromUs,
            toUs,
            http.RequestAborted).ConfigureAwait(false);
        return TypedResults.Ok(report);
    }

    /// <summary>Handles <c>GET /v1/vehicles/{vehicle}/explain</c>.</summary>
    internal static async Task<Results<Ok<ExplainResponse>, ProblemHttpResult>> GetExplanation(
        string vehicle, string? time, [Microsoft.AspNetCore.Mvc.FromQuery(Name = "window_s")] string? windowText, HttpContext http, FusionDatabase database, TrackProcessor processor, IOptions<AuditOptions> options)
    {
        var caller = ApiCaller.Of(http);
        var settings = options.Value;
        if (QueryTime.Check(time, out long timeUs) is { } timeProblem)
        {
            return BadRequest("time", timeProblem);
        }

        double windowS = 10;
        if (windowText is not null
            && (!double.TryParse(windowText, System.Globalization.NumberStyles.Float, CultureInfo.InvariantCulture, out windowS) || !double.IsFinite(windowS) || windowS <= 0))
        {
            return BadRequest("window_s", "'" + windowText + "' is not a positive number of seconds");
        }

        if (windowS > settings.MaxExplainWindowS)
        {
            return BadRequest("window_s", string.Create(CultureInfo.InvariantCulture, $"{windowS:0.###} s exceeds the limit of {settings.MaxExplainWindowS:0.###} s"));
        }

        if (!await VehicleExistsAsync(database, caller.FleetId, vehicle, http.RequestAborted).ConfigureAwait(false))
        {
            return NotFound(vehicle);
        }

        var explanation = await ExplainReplay.BuildAsync(
            new AuditRepository(database.ReadDataSource),
            new FilterCheckpointRepository(database.ReadDataSource),
            new ReceiverFitRepository(database.ReadDataSource),
            processor,
            settings,
            caller.FleetId,
            vehicle,
            timeUs,
            windowS,
            http.RequestAborted).ConfigureAwait(false);
        return TypedResults.Ok(explanation);
    }

    private static async Task<bool> VehicleExistsAsync(FusionDatabase database, Guid fleetId, string vehicle, CancellationToken cancellationToken) =>
        Ingest.TelemetryMessageParser.IsValidVehicleId(vehicle)
        && await new VehicleRepository(database.ReadDataSource).ExistsAsync(fleetId, vehicle, cancellationToken).ConfigureAwait(false);

    private static ProblemHttpResult BadRequest(string parameter, string problem) =>
        TypedResults.Problem(title: "Invalid query parameter", detail: parameter + ": " + problem, statusCode: StatusCodes.Status400BadRequest,
            extensions: new Dictionary<string, object?> { ["parameter"] = parameter });

    private static ProblemHttpResult NotFound(string vehicle) =>
        TypedResults.Problem(title: "Not found", detail: "vehicle: no vehicle '" + vehicle + "' in this fleet", statusCode: StatusCodes.Status404NotFound);
}
