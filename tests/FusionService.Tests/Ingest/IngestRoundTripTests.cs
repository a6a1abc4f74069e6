// Ingest -> fused state: the service's state equals the estimation core run directly on the same measurements.
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class IngestRoundTripTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Ingested_drive_gives_the_state_of_the_core_run_directly()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-rt", TelemetryDrive.StartUs(TimeSpan.FromMinutes(5)), seed: 31);
        using var ingest = fixture.Client(fleet.IngestKey);
        int accepted = 0;
        for (int from = 0; from < drive.Messages.Count; from += 200)
        {
            var response = await ingest.IngestOkAsync(drive.Body(from, Math.Min(from + 200, drive.Messages.Count)));
            accepted += response.Accepted;
            Assert.Equal(0, response.Rejected);
        }

        Assert.Equal(drive.Messages.Count, accepted);
        int rows = drive.Messages.Sum(m => m.Core.Length);
        Assert.Equal(rows, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));

        var oracle = new TrackOracle();
        oracle.Process(drive.Messages.Select(m => m.Core));
        using var read = fixture.Client(fleet.ReadKey);
        var state = await read.StateAsync("van-rt");
        Assert.Equal(oracle.Response("van-rt"), state);

        // The estimate is near the last GNSS fix (invented data, 3 m fixes): a plain sanity bound, not a reference value.
        var lastFix = drive.Messages.Last(m => (string)m.Message["kind"]! == "gnss").Message;
        double northM = ((double)lastFix["lat_deg"]! - state.LatDeg) * 111_132.0;
        double eastM = ((double)lastFix["lon_deg"]! - state.LonDeg) * 111_320.0 * Math.Cos(state.LatDeg * Math.PI / 180);
        Assert.True(Math.Sqrt((northM * northM) + (eastM * eastM)) < 30, "estimate far from the last fix");
        Assert.True(state.Ellipse95.SemiMajorM >= state.Ellipse95.SemiMinorM && state.Ellipse95.SemiMinorM > 0, "ellipse axes");
        Assert.InRange(state.HeadingDeg, 0, 360);
    }

    [Fact]
    public async Task Vehicle_list_shows_the_latest_stored_fused_state()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-list", TelemetryDrive.StartUs(TimeSpan.FromMinutes(4)), seed: 32);
        using var ingest = fixture.Client(fleet.IngestKey);
        await ingest.IngestOkAsync(drive.Body(0, 300));
        await fixture.Host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);
        using var read = fixture.Client(fleet.ReadKey);
        using var response = await read.GetAsync("/v1/vehicles");
        var list = System.Text.Json.JsonSerializer.Deserialize<FusionService.Vehicles.VehicleListResponse>(await response.Content.ReadAsStringAsync(), Api.Json)!;
        var van = Assert.Single(list.Vehicles);
        Assert.Equal("van-list", van.Vehicle);
        long newestGnssUs = drive.Messages.Take(300).Where(m => (string)m.Message["kind"]! == "gnss").Max(m => m.Core[0].TimeUs);
        Assert.True(van.Time >= DateTimeOffset.UnixEpoch.AddTicks(newestGnssUs * 10), "the list lags the newest fix");
        Assert.True(await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id) == 0, "outcomes left pending");

        // Fused states: one at every GNSS position epoch once the track runs, and never more than 1 s apart.
        var times = new List<long>();
        await using (var connection = await fixture.Store.OpenConnectionAsync())
        await using (var command = new Npgsql.NpgsqlCommand("SELECT time_us FROM fused_states WHERE fleet_id = $1 ORDER BY time_us", connection))
        {
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = fleet.Id });
            await using var reader = await command.ExecuteReaderAsync();
            while (await reader.ReadAsync())
            {
                times.Add(reader.GetInt64(0));
            }
        }

        Assert.NotEmpty(times);
        var gnssEpochs = drive.Messages.Take(300).Where(m => (string)m.Message["kind"]! == "gnss").Select(m => m.Core[0].TimeUs).Where(t => t >= times[0]);
        Assert.All(gnssEpochs, t => Assert.Contains(t, times));
        Assert.All(times.Zip(times.Skip(1)), pair => Assert.InRange(pair.Second - pair.First, 1, 1_000_000));
    }
}
