// Track history and distance of one vehicle of the caller's fleet.
using FusionService.Database;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Smoothing;
using FusionService.Http;
using FusionService.Security;
using FusionService.Storage.Fleets;
using FusionService.Storage.History;
using FusionService.Storage.Vehicles;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.Options;
using Microsoft.Net.Http.Headers;
using static FusionService.Estimation.Models.StateIndex;

using FusionService.Operations;

namespace FusionService.History;

/// <summary>Maps <c>GET /v1/vehicles/{vehicle}/track</c> and <c>GET /v1/vehicles/{vehicle}/distance</c>.</summary>
public static class HistoryEndpoints
{
    /// <summary>The caution carried by every history response.</summary>
    public const string Caution =
        "Estimates with the stated uncertainty: not for safety-critical navigation or collision avoidance. Vehicle locations "
        + "reveal where drivers were and are personal data: restrict read keys and retention accordingly.";

    private const string TimeHelp = "RFC 3339 with an offset (e.g. 2026-05-01T08:30:00Z) or Unix milliseconds";

    /// <summary>Maps the history endpoints.</summary>
    public static IEndpointRouteBuilder MapHistoryEndpoints(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/v1/vehicles").WithTags("History");
        group.MapGet("/{vehicle}/track", GetTrack)
            .WithResponseExample(200, "track.json")
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .AdmitAsHeavyRead()
            .WithName("GetVehicleTrack")
            .WithSummary("Track history of one vehicle: raw fixes, filtered or RTS-smoothed states")
            .WithDescription(
                "Points over [from, to) (" + TimeHelp + "), at most Tracks:MaxWindowHours (default 24 h) apart. "
                + "kind=raw: stored GNSS fixes with the live filter's outcome, NIS and accuracy; kind=filtered: the live filter's stored "
                + "states; kind=smoothed (default): Rauch-Tung-Striebel smoothed states from a replay of every stored measurement, "
                + "late ones included, one per Tracks:SmoothedIntervalS (default 1 s). step (seconds, optional) keeps at most one point "
                + "per step. format=json|geojson|gpx|csv or Accept: application/json, application/geo+json, application/gpx+xml, "
                + "text/csv (format wins). The body is streamed. Example: GET /v1/vehicles/van-07/track?from=2026-05-01T08:00:00Z"
                + "&to=2026-05-01T09:00:00Z&kind=smoothed&step=5&format=geojson. Needs a read or admin key; another fleet's "
                + "vehicle is 404. " + Caution + FusionService.Http.LocationCaution.Documentation)
            .Produces(StatusCodes.Status200OK, null, "application/json", "application/geo+json", "application/gpx+xml", "text/csv")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        group.MapGet("/{vehicle}/distance", GetDistance)
            .WithResponseExample(200, "distance.json")
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .AdmitAsHeavyRead()
            .WithName("GetVehicleDistance")
            .WithSummary("Distance travelled by one vehicle, with its standard deviation")
            .WithDescription(
                "Over [from, to) (" + TimeHelp + "), at most Tracks:MaxWindowHours apart: smoothed_m and smoothed_sd_m from "
                + "the RTS-smoothed speed (the standard deviation uses the smoothed cross-covariances), split into driven_m and carried_m "
                + "(carried: towed, ferried or lifted, GNSS moving while the wheels read zero), raw_polyline_m through "
                + "every stored GNSS fix (ellipsoidal), wheel_m from the wheel-speed readings divided by the smoothed wheel-speed "
                + "scale, stationary_s while the smoothed speed was at most 0.05 m/s. Example: GET /v1/vehicles/van-07/distance"
                + "?from=2026-05-01T08:00:00Z&to=2026-05-01T16:00:00Z. Needs a read or admin key; another fleet's vehicle is 404. "
                + Caution)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }

    /// <summary>Handles <c>GET /v1/vehicles/{vehicle}/track</c>.</summary>
    internal static async Task<IResult> GetTrack(
        string vehicle,
        HttpContext http,
        FusionDatabase database,
        SmoothedTrackBuilder smoother,
        IOptions<TrackHistoryOptions> options,
        string? from = null,
        string? to = null,
        string? kind = null,
        string? step = null,
        string? format = null)
    {
        var caller = ApiCaller.Of(http);
        if (Window(from, to, options.Value) is { } windowProblem)
        {
            return windowProblem.Problem;
        }

        HistoryTime.TryParse(from, out long fromUs);
        HistoryTime.TryParse(to, out long toUs);
        TrackKind trackKind;
        switch (kind)
        {
            case null or "" or "smoothed":
                trackKind = TrackKind.Smoothed;
                break;
            case "raw":
                trackKind = TrackKind.Raw;
                break;
            case "filtered":
                trackKind = TrackKind.Filtered;
                break;
            default:
                return BadRequest("kind: must be raw, filtered or smoothed");
        }

        long stepUs = 0;
        if (!string.IsNullOrEmpty(step))
        {
            if (!double.TryParse(step, System.Globalization.NumberStyles.Float, System.Globalization.CultureInfo.InvariantCulture, out double stepS)
                || !double.IsFinite(stepS) || stepS <= 0 || stepS * 1e6 > toUs - fromUs)
            {
                return BadRequest("step: must be a positive number of seconds no longer than the window");
            }

            stepUs = (long)Math.Round(stepS * 1e6);
        }

        if (ChooseFormat(format, http.Request) is not { } trackFormat)
        {
            return BadRequest("format: must be json, geojson, gpx or csv");
        }

        if (!await VehicleExistsAsync(database, caller.FleetId, vehicle, http.RequestAborted).ConfigureAwait(false))
        {
            return NotFound(vehicle);
        }

        var request = new TrackRequest(vehicle, fromUs, toUs, trackKind, stepUs, trackFormat);
        var header = new TrackHeader(vehicle, trackKind.ToString().ToLowerInvariant(), fromUs, toUs, Caution);
        int flushEvery = options.Value.FlushEveryPoints;
        switch (trackKind)
        {
            case TrackKind.Raw:
                return new TrackStreamResult(header, trackFormat, TrackPointSources.RawAsync(database, caller.FleetId, request, http.RequestAborted), flushEvery);
            case TrackKind.Filtered:
                return new TrackStreamResult(header, trackFormat, TrackPointSources.FilteredAsync(database, caller.FleetId, request, http.RequestAborted), flushEvery);
            default:
                long intervalUs = (long)Math.Round(options.Value.SmoothedIntervalS * 1e6);
                if (stepUs > 0 && stepUs < intervalUs)
                {
                    intervalUs = Math.Max(stepUs, 100_000);
                }

                var track = await smoother.BuildAsync(caller.FleetId, vehicle, fromUs, toUs, intervalUs, keepDistanceInputs: false, http.RequestAborted).ConfigureAwait(false);
                return new TrackStreamResult(header, trackFormat, TrackPointSources.SmoothedAsync(track, request), flushEvery);
        }
    }

    /// <summary>Handles <c>GET /v1/vehicles/{vehicle}/distance</c>.</summary>
    internal static async Task<Results<Ok<DistanceResponse>, ProblemHttpResult>> GetDistance(
        string vehicle,
        HttpContext http,
        FusionDatabase database,
        SmoothedTrackBuilder smoother,
        IOptions<TrackHistoryOptions> options,
        string? from = null,
        string? to = null)
    {
        var caller = ApiCaller.Of(http);
        if (Window(from, to, options.Value) is { } windowProblem)
        {
            return windowProblem.Problem;
        }

        HistoryTime.TryParse(from, out long fromUs);
        HistoryTime.TryParse(to, out long toUs);
        if (!await VehicleExistsAsync(database, caller.FleetId, vehicle, http.RequestAborted).ConfigureAwait(false))
        {
            return NotFound(vehicle);
        }

        // The wheel speeds and the raw fixes come with the replay (it reads every stored measurement of the window).
        long intervalUs = (long)Math.Round(options.Value.SmoothedIntervalS * 1e6);
        using var track = await smoother.BuildAsync(caller.FleetId, vehicle, fromUs, toUs, intervalUs, keepDistanceInputs: true, http.RequestAborted).ConfigureAwait(false);
        DistanceEstimate smoothed = TrapezoidDistanceIntegrator.Integrate(track.Segments, fromUs, toUs, track.Carried);
        var odometer = new OdometerDistance();
        var polyline = new PolylineLength();
        var scale = new ScaleLookup(track.Segments);
        foreach (Measurement m in track.DistanceInputs)
        {
            if (m.TimeUs < fromUs || m.TimeUs >= toUs)
            {
                continue;
            }

            if (m.Kind == SensorKind.GnssPosition)
            {
                GnssFixView fix = m.AsGnssFix();
                polyline.Add(fix.LatitudeDeg, fix.LongitudeDeg);
            }
            else if (scale.TryAt(m.TimeUs, out double k))
            {
                odometer.Add(m.TimeUs, m.AsWheelSpeed().SpeedMps, k);
            }
        }

        return TypedResults.Ok(new DistanceResponse(
            vehicle, HistoryTime.Format(fromUs), HistoryTime.Format(toUs), smoothed.DistanceM, smoothed.SigmaM,
            smoothed.DistanceM - smoothed.CarriedM, smoothed.CarriedM, polyline.LengthM, odometer.DistanceM, smoothed.StationaryS, Caution));
    }

    /// <summary>The format named by <paramref name="format"/>, else the best one the Accept header allows (JSON by default); null when unknown.</summary>
    internal static TrackFormat? ChooseFormat(string? format, HttpRequest request)
    {
        if (!string.IsNullOrEmpty(format))
        {
            return format switch
            {
                "json" => TrackFormat.Json,
                "geojson" => TrackFormat.GeoJson,
                "gpx" => TrackFormat.Gpx,
                "csv" => TrackFormat.Csv,
                _ => null,
            };
        }

        var accepted = request.GetTypedHeaders().Accept;
        if (accepted is null || accepted.Count == 0)
        {
            return TrackFormat.Json;
        }

        foreach (MediaTypeHeaderValue media in accepted.OrderByDescending(a => a.Quality ?? 1.0))
        {
            TrackFormat? chosen = media.MediaType.Value?.ToLowerInvariant() switch
            {
                "application/json" or "*/*" or "application/*" => TrackFormat.Json,
                "application/geo+json" => TrackFormat.GeoJson,
                "application/gpx+xml" => TrackFormat.Gpx,
                "text/csv" or "text/*" => TrackFormat.Csv,
                _ => null,
            };
            if (chosen is not null && (media.Quality ?? 1.0) > 0)
            {
                return chosen;
            }
        }

        return TrackFormat.Json;
    }

    private static async Task<bool> VehicleExistsAsync(FusionDatabase database, Guid fleetId, string vehicle, CancellationToken cancel) =>
        Ingest.TelemetryMessageParser.IsValidVehicleId(vehicle)
        && await new VehicleRepository(database.ReadDataSource).ExistsAsync(fleetId, vehicle, cancel).ConfigureAwait(false);

    private static WindowProblem? Window(string? from, string? to, TrackHistoryOptions options)
    {
        if (QueryTime.Check(from, out long fromUs) is { } fromProblem)
        {
            return new(BadRequest("from: " + fromProblem));
        }

        if (QueryTime.Check(to, out long toUs) is { } toProblem)
        {
            return new(BadRequest("to: " + toProblem));
        }

        if (toUs <= fromUs)
        {
            return new(BadRequest("to: must be after from"));
        }

        if (toUs - fromUs > options.MaxWindowHours * 3.6e9)
        {
            return new(BadRequest(string.Create(
                System.Globalization.CultureInfo.InvariantCulture,
                $"to: the window from..to is {(toUs - fromUs) / 3.6e9:0.###} h, longer than the allowed {options.MaxWindowHours:0.###} h (Tracks:MaxWindowHours)")));
        }

        return null;
    }

    private static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(title: "Invalid request", detail: detail, statusCode: StatusCodes.Status400BadRequest);

    private static ProblemHttpResult NotFound(string vehicle) =>
        TypedResults.Problem(title: "Not found", detail: "vehicle: no vehicle '" + vehicle + "' in this fleet", statusCode: StatusCodes.Status404NotFound);

    private sealed record WindowProblem(ProblemHttpResult Problem);

    /// <summary>The smoothed wheel-speed scale at a time: the value of the latest smoothed instant at or before it (or the first one).</summary>
    private sealed class ScaleLookup(IReadOnlyList<SmoothedSegment> segments)
    {
        private int _segment;
        private int _index;

        public bool TryAt(long timeUs, out double scale)
        {
            scale = 0;
            while (_segment < segments.Count)
            {
                SmoothedSegment s = segments[_segment];
                if (s.Count == 0 || (timeUs > s.TimesUs[^1] && _segment + 1 < segments.Count && segments[_segment + 1].Count > 0 && timeUs >= segments[_segment + 1].TimesUs[0]))
                {
                    _segment++;
                    _index = 0;
                    continue;
                }

                while (_index + 1 < s.Count && s.TimesUs[_index + 1] <= timeUs)
                {
                    _index++;
                }

                scale = s.Means[_index][WheelScale];
                return scale > 0;
            }

            return false;
        }
    }
}
