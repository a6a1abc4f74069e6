// GET /v1/vehicles as an operations person uses it: freshness, status, open alerts, filters and paging.
using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Vehicles;

[Collection(ServiceTests.Name)]
public sealed class VehicleListTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue15_list_shows_freshness_per_sensor_status_alerts_and_pages()
    {
        var fleet = await fixture.NewFleetAsync();
        using var ingest = fixture.Client(fleet.IngestKey);
        var before = DateTimeOffset.UtcNow;
        var drives = new[] { "van-a", "van-b", "van-c" }
            .Select((v, i) => TelemetryDrive.Create(v, TelemetryDrive.StartUs(TimeSpan.FromMinutes(4)), seed: 1500 + i))
            .ToList();
        foreach (var drive in drives)
        {
            await ingest.IngestOkAsync(drive.Body(0, 300));
        }

        await fixture.Host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);
        using var read = fixture.Client(fleet.ReadKey);
        using var response = await read.GetAsync("/v1/vehicles");
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Contains("collision avoidance", Assert.Single(response.Headers.GetValues("Fusion-Caution")), StringComparison.Ordinal);
        var body = await response.Content.ReadFromJsonAsync<JsonElement>();
        Assert.Contains("personal data", body.GetProperty("caution").GetString(), StringComparison.Ordinal);
        Assert.Equal(JsonValueKind.Null, body.GetProperty("next_after").ValueKind);
        var asOf = body.GetProperty("as_of").GetDateTimeOffset();
        var vans = body.GetProperty("vehicles").EnumerateArray().ToList();
        Assert.Equal(["van-a", "van-b", "van-c"], vans.Select(v => v.GetProperty("vehicle").GetString()));
        foreach (var van in vans)
        {
            string id = van.GetProperty("vehicle").GetString()!;

            // The row the write path keeps is the newest stored fused state of the vehicle.
            long newestUs = await fixture.CountAsync("SELECT max(time_us) FROM fused_states WHERE fleet_id = $1 AND vehicle_id = $2", fleet.Id, id);
            Assert.Equal(DateTimeOffset.UnixEpoch.AddTicks(newestUs * 10), van.GetProperty("time").GetDateTimeOffset());
            // Ages are given to the millisecond: within half of one of the exact difference (comparing both rounded to
            // 2 decimals failed whenever the two sat either side of a rounding boundary, 0.0349 against 0.035).
            Assert.InRange(van.GetProperty("estimate_age_s").GetDouble(), AgeS(asOf, van.GetProperty("time").GetDateTimeOffset()) - HalfMsS, AgeS(asOf, van.GetProperty("time").GetDateTimeOffset()) + HalfMsS);

            // Received just now by the server's clock, every sensor of the drive.
            var received = van.GetProperty("last_received_at").GetDateTimeOffset();
            Assert.InRange(received, before.AddSeconds(-1), asOf);
            Assert.InRange(van.GetProperty("last_received_age_s").GetDouble(), AgeS(asOf, received) - HalfMsS, AgeS(asOf, received) + HalfMsS);
            var bySensor = van.GetProperty("last_received_by_sensor");
            foreach (string sensor in new[] { "gnss", "wheel", "imu" })
            {
                Assert.InRange(bySensor.GetProperty(sensor).GetDateTimeOffset(), before.AddSeconds(-1), received);
            }

            string expected = Math.Abs(van.GetProperty("speed_mps").GetDouble()) >= 0.5 ? "moving" : "stopped";
            Assert.Equal(expected, van.GetProperty("status").GetString());
            Assert.Equal(0, van.GetProperty("open_alerts").GetInt32());
        }

        // Paging: two pages of two and one, each vehicle once.
        var first = await read.GetFromJsonAsync<JsonElement>("/v1/vehicles?limit=2");
        Assert.Equal(["van-a", "van-b"], first.GetProperty("vehicles").EnumerateArray().Select(v => v.GetProperty("vehicle").GetString()));
        Assert.Equal("van-b", first.GetProperty("next_after").GetString());
        var second = await read.GetFromJsonAsync<JsonElement>("/v1/vehicles?limit=2&after=van-b");
        Assert.Equal(["van-c"], second.GetProperty("vehicles").EnumerateArray().Select(v => v.GetProperty("vehicle").GetString()));
        Assert.Equal(JsonValueKind.Null, second.GetProperty("next_after").ValueKind);

        // van-b last heard from 10 minutes ago (set in the table the ingest path keeps) is silent after 120 s, not after 3600 s.
        await ExecuteAsync("UPDATE vehicle_receipts SET last_received_at = now() - interval '10 minutes' WHERE fleet_id = $1 AND vehicle_id = 'van-b'", fleet.Id);

        // van-c gets an open alert, van-a an acknowledged one.
        await InsertAlertAsync(fleet.Id, "van-c", "gated_burst", "warning", "open");
        await InsertAlertAsync(fleet.Id, "van-a", "gated_burst", "warning", "acknowledged");
        Assert.Equal(["van-b"], await IdsAsync(read, "status=silent"));
        Assert.Empty(await IdsAsync(read, "status=silent&silent_after_s=3600"));
        Assert.DoesNotContain("van-b", await IdsAsync(read, "status=moving,stopped"));
        Assert.Equal(["van-c"], await IdsAsync(read, "open_alerts=true"));
        Assert.Equal(["van-a", "van-b"], await IdsAsync(read, "open_alerts=false"));
        var all = await read.GetFromJsonAsync<JsonElement>("/v1/vehicles");
        var byId = all.GetProperty("vehicles").EnumerateArray().ToDictionary(v => v.GetProperty("vehicle").GetString()!);
        Assert.Equal((0, 1), (byId["van-a"].GetProperty("open_alerts").GetInt32(), byId["van-a"].GetProperty("unresolved_alerts").GetInt32()));
        Assert.Equal((1, 1), (byId["van-c"].GetProperty("open_alerts").GetInt32(), byId["van-c"].GetProperty("unresolved_alerts").GetInt32()));
        Assert.InRange(byId["van-b"].GetProperty("last_received_age_s").GetDouble(), 599, 700);

        // A carried vehicle (an unresolved moved_without_driving alert) is carried unless silent.
        await InsertAlertAsync(fleet.Id, "van-c", "moved_without_driving", "warning", "open");
        Assert.Equal(["van-c"], await IdsAsync(read, "status=carried"));

        // Another fleet sees none of them.
        var other = await fixture.NewFleetAsync();
        Assert.Empty(await IdsAsync(fixture.Client(other.ReadKey), string.Empty));
    }

    [Fact]
    public async Task Issue15_one_silence_limit_for_the_list_and_the_dashboard_set_by_Alerts_SilentAfterS()
    {
        var fleet = await fixture.NewFleetAsync();
        using (var ingest = fixture.Client(fleet.IngestKey))
        {
            foreach (var (van, i) in new[] { "van-quiet", "van-heard" }.Select((v, i) => (v, i)))
            {
                await ingest.IngestOkAsync(TelemetryDrive.Create(van, TelemetryDrive.StartUs(TimeSpan.FromMinutes(4)), seed: 1520 + i).Body(0, 300));
            }
        }

        await fixture.Host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);
        // A host whose silence limit is 300 s instead of the default 120 s.
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Alerts:SilentAfterS"] = "300" });
        using var read = fixture.Client(fleet.ReadKey, host);

        // The dashboard's settings and the list name the same limit, the one configured.
        var settings = await read.GetFromJsonAsync<JsonElement>("/settings.json");
        Assert.Equal(300, settings.GetProperty("silent_after_s").GetDouble());
        var list = await read.GetFromJsonAsync<JsonElement>("/v1/vehicles");
        Assert.Equal(300, list.GetProperty("silent_after_s").GetDouble());
        Assert.Equal(120, (await read.GetFromJsonAsync<JsonElement>("/v1/vehicles?silent_after_s=120")).GetProperty("silent_after_s").GetDouble());

        // Last heard 330 s ago: silent by the 300 s limit; 270 s ago: not yet (both would be silent by the old 120 s default).
        await ExecuteAsync("UPDATE vehicle_receipts SET last_received_at = now() - interval '330 seconds' WHERE fleet_id = $1 AND vehicle_id = 'van-quiet'", fleet.Id);
        await ExecuteAsync("UPDATE vehicle_receipts SET last_received_at = now() - interval '270 seconds' WHERE fleet_id = $1 AND vehicle_id = 'van-heard'", fleet.Id);
        var byId = (await read.GetFromJsonAsync<JsonElement>("/v1/vehicles")).GetProperty("vehicles").EnumerateArray()
            .ToDictionary(v => v.GetProperty("vehicle").GetString()!, v => v.GetProperty("status").GetString());
        Assert.Equal("silent", byId["van-quiet"]);
        Assert.NotEqual("silent", byId["van-heard"]);
        Assert.Equal(["van-quiet"], await IdsAsync(read, "status=silent"));
        Assert.Equal(["van-heard", "van-quiet"], await IdsAsync(read, "status=silent&silent_after_s=120"));
    }

    [Theory]
    [InlineData("status=parked", "status:")]
    [InlineData("status=", "status:")]
    [InlineData("open_alerts=yes", "open_alerts:")]
    [InlineData("silent_after_s=5", "silent_after_s:")]
    [InlineData("silent_after_s=NaN", "silent_after_s:")]
    [InlineData("limit=0", "limit:")]
    [InlineData("limit=1001", "limit:")]
    [InlineData("after=%00", "after:")]
    public async Task Issue15_bad_list_parameters_are_400_naming_the_parameter(string query, string detailPrefix)
    {
        var fleet = await fixture.NewFleetAsync();
        using var read = fixture.Client(fleet.ReadKey);
        using var response = await read.GetAsync("/v1/vehicles?" + query);
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var problem = await response.ProblemAsync();
        Assert.StartsWith(detailPrefix, problem.GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Issue15_state_and_track_carry_the_caution()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-caution", TelemetryDrive.StartUs(TimeSpan.FromMinutes(4)), seed: 1510);
        await fixture.Client(fleet.IngestKey).IngestOkAsync(drive.Body(0, 300));
        using var read = fixture.Client(fleet.ReadKey);
        using var state = await read.GetAsync("/v1/vehicles/van-caution/state");
        Assert.Equal(HttpStatusCode.OK, state.StatusCode);
        Assert.Single(state.Headers.GetValues("Fusion-Caution"));
        Assert.Contains("collision avoidance", (await state.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("caution").GetString(), StringComparison.Ordinal);
        string from = DateTimeOffset.UtcNow.AddMinutes(-10).ToUnixTimeMilliseconds().ToString(System.Globalization.CultureInfo.InvariantCulture);
        string to = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds().ToString(System.Globalization.CultureInfo.InvariantCulture);
        using var csv = await read.GetAsync("/v1/vehicles/van-caution/track?kind=filtered&format=csv&from=" + from + "&to=" + to);
        Assert.Equal(HttpStatusCode.OK, csv.StatusCode);
        Assert.Contains("personal data", Assert.Single(csv.Headers.GetValues("Fusion-Caution")), StringComparison.Ordinal);
    }

    private static async Task<List<string>> IdsAsync(HttpClient client, string query)
    {
        var body = await client.GetFromJsonAsync<JsonElement>("/v1/vehicles?" + query);
        return [.. body.GetProperty("vehicles").EnumerateArray().Select(v => v.GetProperty("vehicle").GetString()!)];
    }

    private async Task ExecuteAsync(string sql, params object[] parameters)
    {
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new Npgsql.NpgsqlCommand(sql, connection);
        foreach (var p in parameters)
        {
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = p });
        }

        await command.ExecuteNonQueryAsync();
    }

    private Task InsertAlertAsync(Guid fleetId, string vehicle, string kind, string severity, string state) => ExecuteAsync(
        "INSERT INTO alerts (alert_id, fleet_id, vehicle_id, kind, severity, state, started_at, last_seen_at, count, summary, details) "
        + "VALUES (gen_random_uuid(), $1, $2, $3, $4, $5, now(), now(), 1, 'test', '{}'::jsonb)",
        fleetId, vehicle, kind, severity, state);

    // Half a millisecond, plus a nanosecond for the binary representation of the rounded value.
    private const double HalfMsS = 0.0005 + 1e-9;

    private static double AgeS(DateTimeOffset asOf, DateTimeOffset time) => (asOf - time).TotalSeconds;
}
