// GET /v1/base-layer: the roads and stops of the fleet, learned from its own stored estimates.
using System.Globalization;
using FusionService.Database;
using FusionService.Estimation.Geodesy;
using FusionService.Security;
using FusionService.Storage.BaseLayer;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.HttpResults;

namespace FusionService.BaseLayer;

/// <summary>Maps <c>GET /v1/base-layer</c>.</summary>
public static class BaseLayerEndpoints
{
    /// <summary>Least speed of an estimate counted as driving, m/s (a choice of ours: above walking pace noise).</summary>
    public const double MovingMps = 1.0;

    /// <summary>Speed below which an estimate counts as standing, m/s (a choice of ours).</summary>
    public const double StandingMps = 0.3;

    /// <summary>Largest 95 % semi-major axis of an estimate used, metres: unsure positions would smear the roads.</summary>
    public const double MaxEllipseM = 15;

    /// <summary>Side of the cells stops are gathered in, metres.</summary>
    public const double StopCellM = 40;

    /// <summary>Least vehicle-minutes standing in a stop cell for it to be a stop.</summary>
    public const int MinDwellMinutes = 3;

    /// <summary>Most stops returned.</summary>
    public const int MaxStops = 200;

    private const string Caution =
        "Drawn from the fleet's own position estimates, not from a map: a road appears only where vans drove, stops only where "
        + "they stood. Not for navigation. It shows where drivers work: personal data.";

    /// <summary>Maps the endpoint.</summary>
    public static IEndpointRouteBuilder MapBaseLayerEndpoints(this IEndpointRouteBuilder app)
    {
        app.MapGet("/v1/base-layer", GetBaseLayer)
            .WithTags("Base layer")
            .RequireApiKey(ApiKeyRole.Read, ApiKeyRole.Admin)
            .WithName("GetBaseLayer")
            .WithSummary("Roads and stops the fleet has used, for a map without tiles")
            .WithDescription(
                "A GeoJSON FeatureCollection learned from the fleet's own stored estimates of the last days: one point per square of "
                + "cell_m metres the vans drove through (layer road: an estimate moving at 1 m/s or faster with its position sure to 15 m "
                + "or better fell in the square), and one point per place where vans stood for 3 minutes or more in all (layer stop: "
                + "slower than 0.3 m/s, gathered in 40 m squares, longest first, at most 200). The dashboard draws it under the vans, so "
                + "the map shows the fleet's streets and stops with no tile server. Query: days (1-31, default 7), cell_m (5-100, "
                + "default 10). Example: GET /v1/base-layer?days=1&cell_m=20. Needs a read or admin key. " + Caution)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .RetryOnStaleConnection();
        return app;
    }

    /// <summary>Roads and stops the fleet has used, for a map without tiles.</summary>
    /// <param name="http">The request.</param>
    /// <param name="database">The store.</param>
    /// <param name="days">How many days back to read the fleet's estimates: a whole number from 1 to 31, default 7.</param>
    /// <param name="cellM">Side of a road square in metres: 5 to 100, default 10.</param>
    internal static async Task<Results<Ok<BaseLayerCollection>, ProblemHttpResult>> GetBaseLayer(
        HttpContext http, FusionDatabase database, string? days = null, [Microsoft.AspNetCore.Mvc.FromQuery(Name = "cell_m")] string? cellM = null)
    {
        int dayCount = 7;
        if (days is not null && (!int.TryParse(days, NumberStyles.Integer, CultureInfo.InvariantCulture, out dayCount) || dayCount < 1 || dayCount > 31))
        {
            return BadRequest("days: must be a whole number of days from 1 to 31");
        }

        double cell = 10;
        if (cellM is not null && (!double.TryParse(cellM, NumberStyles.Float, CultureInfo.InvariantCulture, out cell) || !double.IsFinite(cell) || cell < 5 || cell > 100))
        {
            return BadRequest("cell_m: must be a number of metres from 5 to 100");
        }

        var caller = ApiCaller.Of(http);
        var since = DateTimeOffset.UtcNow.AddDays(-dayCount);
        var repository = new BaseLayerRepository(database.DataSource);
        var features = new List<BaseLayerFeature>();
        if (await repository.ReferenceLatitudeAsync(caller.FleetId, since, http.RequestAborted).ConfigureAwait(false) is { } latDeg)
        {
            (double northPerDegM, double eastPerDegM) = MetresPerDegree(latDeg);
            double cellLatDeg = cell / northPerDegM, cellLonDeg = cell / eastPerDegM;
            var roads = await repository.RoadCellsAsync(caller.FleetId, since, cellLatDeg, cellLonDeg, MovingMps, MaxEllipseM, 1, http.RequestAborted).ConfigureAwait(false);
            foreach (var r in roads)
            {
                features.Add(Point((r.Col + 0.5) * cellLonDeg, (r.Row + 0.5) * cellLatDeg, new BaseLayerProperties("road", r.Vehicles, States: r.States)));
            }

            var stops = await repository.StopsAsync(
                caller.FleetId, since, StopCellM / northPerDegM, StopCellM / eastPerDegM, StandingMps, MaxEllipseM, MinDwellMinutes, MaxStops, http.RequestAborted).ConfigureAwait(false);
            foreach (var s in stops)
            {
                features.Add(Point(s.LonDeg, s.LatDeg, new BaseLayerProperties("stop", s.Vehicles, DwellS: s.DwellMinutes * 60.0)));
            }
        }

        return TypedResults.Ok(new BaseLayerCollection("FeatureCollection", dayCount, cell, StopCellM, since, Caution, features));
    }

    /// <summary>
    /// Metres per degree of latitude (meridian radius M) and of longitude (N cos phi, N the prime-vertical radius) on
    /// WGS-84 at <paramref name="latDeg"/>: M = a (1 - e^2) / (1 - e^2 sin^2 phi)^(3/2), N = a / sqrt(1 - e^2 sin^2 phi).
    /// </summary>
    internal static (double NorthPerDegM, double EastPerDegM) MetresPerDegree(double latDeg)
    {
        var wgs84 = Ellipsoid.Wgs84;
        double e2 = wgs84.FirstEccentricitySquared;
        double phi = Angles.DegreesToRadians(latDeg);
        double w = Math.Sqrt(1 - (e2 * Math.Sin(phi) * Math.Sin(phi)));
        double meridianM = wgs84.SemiMajorAxisM * (1 - e2) / (w * w * w);
        double primeVerticalM = wgs84.SemiMajorAxisM / w;
        return (meridianM * Math.PI / 180, primeVerticalM * Math.Cos(phi) * Math.PI / 180);
    }

    private static BaseLayerFeature Point(double lonDeg, double latDeg, BaseLayerProperties properties) =>
        new("Feature", new BaseLayerPoint("Point", [lonDeg, latDeg]), properties);

    private static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(title: "Invalid request", detail: detail, statusCode: StatusCodes.Status400BadRequest);
}
