// A vehicle the fleet has not had before starts its receiver fit from what the fleet's receivers fitted (issue 12).
using System.Globalization;
using System.Text;
using FusionService.Storage.Vehicles;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using FusionService.Vehicles;

namespace FusionService.Tests.Tracking;

[Collection(ServiceTests.Name)]
public sealed class FleetReceiverStartTests(ServiceFixture fixture)
{
    /// <summary>
    /// The fleet's first vehicle finds nothing fitted and starts from section GnssErrorModel (0.75, 60 s by default);
    /// once three vehicles hold fits on at least 40 long-lag terms of their own (GnssErrorModel:FleetStartMinVehicles,
    /// default 3), the next new vehicle starts from their medians, and the state says so. The fits are written straight
    /// into the store: what the tracks write there is the checkpoint tests' business.
    /// </summary>
    [Fact]
    public async Task Issue12_a_new_vehicle_starts_from_its_fleets_receivers_once_three_have_fitted()
    {
        var fleet = await fixture.NewFleetAsync();
        var ingest = fixture.Client(fleet.IngestKey);
        var read = fixture.Client(fleet.ReadKey);
        await ingest.IngestOkAsync(StartingFixes.Two("van-first"));
        var fits = new ReceiverFitRepository(fixture.Store);
        var none = await Audit.DiagnosticsTests.GetOkAsync(read, "/v1/fleet/receivers");
        Assert.Equal(0, none.GetProperty("vehicles_fitted").GetInt64());
        Assert.False(none.TryGetProperty("correlated_share", out _), "no spread without a counted fit");
        Assert.Equal("settings", none.GetProperty("new_vehicles_start").GetProperty("from").GetString());
        Assert.Equal(60.0, none.GetProperty("new_vehicles_start").GetProperty("time_constant_s").GetDouble());
        await fits.UpsertAsync(fleet.Id, "van-a", 0.90, 100.0, 60);
        await fits.UpsertAsync(fleet.Id, "van-b", 0.92, 120.0, 40);
        await fits.UpsertAsync(fleet.Id, "van-c", 0.94, 130.0, 400);
        await fits.UpsertAsync(fleet.Id, "van-d", 0.40, 15.0, 20);

        await ingest.IngestOkAsync(StartingFixes.Two("van-later"));
        await fixture.Host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);

        Assert.Equal(new GnssErrorModelResponse(0.75, 60.0, Fitted: false, StartedFrom: "settings"), (await read.StateAsync("van-first")).GnssErrorModel);
        var later = (await read.StateAsync("van-later")).GnssErrorModel;
        Assert.Equal(("fleet", false), (later.StartedFrom, later.Fitted));
        Assert.Equal(0.92, later.CorrelatedShare, 9);
        Assert.Equal(120.0, later.TimeConstantS, 9);
        // The fleet's summary: van-d's fit rests on too few terms of its own; the percentiles interpolate linearly between
        // the ordered values (PostgreSQL percentile_cont): the 10th of 0.90, 0.92, 0.94 is 0.90 + 0.2 x 0.02.
        var summary = await Audit.DiagnosticsTests.GetOkAsync(read, "/v1/fleet/receivers");
        Assert.Equal(4, summary.GetProperty("vehicles_fitted").GetInt64());
        Assert.Equal(3, summary.GetProperty("vehicles_counted").GetInt64());
        Assert.Equal(1, summary.GetProperty("vehicles_started_from_fleet").GetInt64());
        Assert.Equal(0.904, summary.GetProperty("correlated_share").GetProperty("p10").GetDouble(), 9);
        Assert.Equal(128.0, summary.GetProperty("time_constant_s").GetProperty("p90").GetDouble(), 9);
        Assert.Equal("fleet", summary.GetProperty("new_vehicles_start").GetProperty("from").GetString());
        Assert.Equal(120.0, summary.GetProperty("new_vehicles_start").GetProperty("time_constant_s").GetDouble(), 9);
        Assert.Equal(System.Net.HttpStatusCode.Forbidden, (await ingest.GetAsync("/v1/fleet/receivers")).StatusCode);
        // Decided once: the decision is stored for the replays from the vehicle's first measurement.
        Assert.Equal(1L, await fixture.CountAsync(
            "SELECT count(*) FROM vehicles WHERE fleet_id = $1 AND vehicle_id = 'van-later' AND gnss_start_decided AND gnss_start_share IS NOT NULL", fleet.Id));
    }

    /// <summary>
    /// A van standing two minutes with a slowly wandering GNSS error (invented: two sinusoids of 2 and 1.5 m over 200 and
    /// 170 s, plus 0.2 m of white noise; wheels at zero, read twice a second) gets a fit of its own, and its checkpoint stores that fit where the
    /// next new vehicle of the fleet will look.
    /// </summary>
    [Fact]
    public async Task Issue12_a_checkpoint_stores_the_tracks_receiver_fit_for_the_fleet()
    {
        var fleet = await fixture.NewFleetAsync();
        const string vehicle = "van-standing";
        await fixture.Client(fleet.IngestKey).IngestOkAsync(StandingVan(vehicle, seconds: 120));
        await fixture.Host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        var model = (await fixture.Client(fleet.ReadKey).StateAsync(vehicle)).GnssErrorModel;
        Assert.True(model.Fitted, "two minutes of standing give a fit");

        await fixture.Host.Services.GetRequiredService<IGrainFactory>().GetGrain<IVehicleTrackGrain>(GrainKeys.Of(fleet.Id, vehicle)).PersistCheckpointAsync();

        // The checkpoint is the track's base, a lag window (60 s) behind its newest data: its fit is an earlier one than
        // the state's, but one, on long-lag terms of the van's own.
        Assert.Equal(1L, await fixture.CountAsync(
            "SELECT count(*) FROM vehicle_receiver_fits WHERE fleet_id = $1 AND vehicle_id = $2 AND share > 0 AND share < 1 AND time_constant_s > 0 AND long_lag_terms > 0",
            fleet.Id, vehicle));
    }

    private static string StandingVan(string vehicle, int seconds)
    {
        var random = new Random(12);
        const double LatDeg = 45.2, LonDeg = 7.3, MetresPerDegree = 111_320.0;
        var start = DateTimeOffset.UtcNow.AddSeconds(-seconds - 1);
        var body = new StringBuilder("[");
        for (int tenth = 0; tenth < seconds * 10; tenth += 5)
        {
            string time = start.AddMilliseconds(tenth * 100).ToString("O", CultureInfo.InvariantCulture);
            body.Append(tenth == 0 ? "" : ",").Append("{\"vehicle\":\"").Append(vehicle).Append("\",\"kind\":\"wheel\",\"time\":\"").Append(time).Append("\",\"speed_mps\":0}");
            if (tenth % 10 == 0)
            {
                double t = tenth / 10.0;
                double eastM = (2.0 * Math.Sin(2 * Math.PI * t / 200)) + (0.2 * Gaussian(random));
                double northM = (1.5 * Math.Cos(2 * Math.PI * t / 170)) + (0.2 * Gaussian(random));
                double lat = LatDeg + (northM / MetresPerDegree), lon = LonDeg + (eastM / (MetresPerDegree * Math.Cos(LatDeg * Math.PI / 180)));
                body.Append(",{\"vehicle\":\"").Append(vehicle).Append("\",\"kind\":\"gnss\",\"time\":\"").Append(time)
                    .Append("\",\"lat_deg\":").Append(lat.ToString("R", CultureInfo.InvariantCulture))
                    .Append(",\"lon_deg\":").Append(lon.ToString("R", CultureInfo.InvariantCulture))
                    .Append(",\"accuracy_m\":3,\"speed_mps\":0}");
            }
        }

        return body.Append(']').ToString();
    }

    // Box-Muller (Box and Muller, Ann. Math. Statist. 29, 1958).
    private static double Gaussian(Random random) =>
        Math.Sqrt(-2.0 * Math.Log(1.0 - random.NextDouble())) * Math.Cos(2.0 * Math.PI * random.NextDouble());
}
