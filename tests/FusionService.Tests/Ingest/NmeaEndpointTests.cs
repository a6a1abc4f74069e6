// POST /v1/vehicles/{vehicle}/nmea: accepted lines are stored durably as the JSON ingest would store them, bad lines are
// reported per line, resends are duplicates, fleets and roles are kept apart (issue 4).
using System.Globalization;
using System.Net;
using System.Text;
using System.Text.Json;
using FusionService.Tests.Audit;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class NmeaEndpointTests(ServiceFixture fixture)
{
    // Invented sentences (positions near 46.2 N, 8.5 E) with the current date, so their checksums are computed here by
    // the standard's definition: XOR of the characters between '$' and '*'.
    private static string Sentence(string payload)
    {
        int sum = 0;
        foreach (char c in payload)
        {
            sum ^= c;
        }

        return "$" + payload + "*" + sum.ToString("X2", CultureInfo.InvariantCulture);
    }

    private static (string Rmc, string Gga) Epoch(DateTime utc, string lat, string lon, string knots, string course, string hdop)
    {
        string time = utc.ToString("HHmmss.ff", CultureInfo.InvariantCulture);
        string date = utc.ToString("ddMMyy", CultureInfo.InvariantCulture);
        return (Sentence($"GNRMC,{time},A,{lat},N,{lon},E,{knots},{course},{date},,,A"),
            Sentence($"GNGGA,{time},{lat},N,{lon},E,1,09,{hdop},512.3,M,47.1,M,,"));
    }

    private static StringContent Text(string body) => new(body, Encoding.ASCII, "text/plain");

    [Fact]
    public async Task Issue4_good_lines_are_stored_bad_ones_reported_and_a_resend_is_duplicate()
    {
        var fleet = await fixture.NewFleetAsync();
        var t = DateTime.UtcNow.AddMinutes(-2);
        t = new DateTime(t.Year, t.Month, t.Day, t.Hour, t.Minute, t.Second, DateTimeKind.Utc);
        var e1 = Epoch(t, "4612.345", "00828.278", "15.5", "92.4", "1.2");
        var e2 = Epoch(t.AddSeconds(1), "4612.346", "00828.289", "15.6", "92.0", "1.0");
        var e3 = Epoch(t.AddSeconds(2), "4612.347", "00828.301", "15.4", "91.8", "2.0");
        string badChecksum = e3.Gga[..^2] + (e3.Gga[^2] == '0' ? "1" : "0") + e3.Gga[^1];
        string body = string.Join("\r\n",
            e1.Rmc, e1.Gga,
            Sentence("GPGSV,3,1,11,03,03,111,00,04,15,270,00,06,01,010,00,13,06,292,00"),
            e2.Gga, e2.Rmc,
            badChecksum,
            Sentence("BDGGA," + t.ToString("HHmmss.ff", CultureInfo.InvariantCulture) + ",4612.350,N,00828.290,E,1,09,1.2,512.3,M,47.1,M,,"),
            Sentence("GNGGA," + t.AddSeconds(3).ToString("HHmmss.ff", CultureInfo.InvariantCulture) + ",,,,,0,00,99.99,,,,,,"),
            e3.Rmc, e3.Gga) + "\r\n";

        using var client = fixture.Client(fleet.IngestKey);
        using var response = await client.PostAsync("/v1/vehicles/van-nmea/nmea", Text(body));
        string text = await response.Content.ReadAsStringAsync();
        Assert.True(response.StatusCode == HttpStatusCode.OK, text);
        var answer = JsonDocument.Parse(text).RootElement;
        var results = answer.GetProperty("results").EnumerateArray().ToDictionary(r => r.GetProperty("line").GetInt32());
        Assert.Equal(10, results.Count);
        Assert.Equal((6, 0, 2, 2), (answer.GetProperty("accepted").GetInt32(), answer.GetProperty("duplicate").GetInt32(), answer.GetProperty("rejected").GetInt32(), answer.GetProperty("ignored").GetInt32()));
        foreach (int line in new[] { 1, 2, 4, 5, 9, 10 })
        {
            Assert.Equal("accepted", results[line].GetProperty("status").GetString());
        }

        Assert.Equal(("ignored", "formatter"), (results[3].GetProperty("status").GetString(), results[3].GetProperty("field").GetString()));
        Assert.Equal(("rejected", "checksum"), (results[6].GetProperty("status").GetString(), results[6].GetProperty("field").GetString()));
        Assert.Equal(("rejected", "talker"), (results[7].GetProperty("status").GetString(), results[7].GetProperty("field").GetString()));
        Assert.Equal(("ignored", "fix_quality"), (results[8].GetProperty("status").GetString(), results[8].GetProperty("field").GetString()));

        // Durability: after the 200 the fixes are in PostgreSQL, worked by hand: 4612.345,N = 46 + 12.345/60 deg,
        // 00828.278,E = 8 + 28.278/60 deg, 15.5 kn = 15.5 x 1852/3600 m/s, course 92.4 deg; accuracy 1-sigma per axis =
        // HDOP x UERE / sqrt(2) with the default UERE of 5 m (HDOP x UERE is DRMS = sqrt(2) sigma; derived), stored negated
        // because it came from the HDOP (Measurement.Value2).
        var rows = await RowsAsync(fleet.Id, "van-nmea");
        Assert.Equal(6, rows.Count);
        long epoch1 = (new DateTimeOffset(t).UtcTicks - DateTime.UnixEpoch.Ticks) / 10;
        var position = rows.Single(r => r.Kind == 0 && r.TimeUs == epoch1);
        AssertNear.Equal(46 + (12.345 / 60), position.V0, 1e-12, "latitude (deg)");
        AssertNear.Equal(8 + (28.278 / 60), position.V1, 1e-12, "longitude (deg)");
        AssertNear.Equal(-1.2 * 5.0 / Math.Sqrt(2), position.V2, 1e-6, "1-sigma accuracy (m), negated");
        var velocity = rows.Single(r => r.Kind == 1 && r.TimeUs == epoch1);
        AssertNear.Equal(15.5 * 1852 / 3600, velocity.V0, 1e-12, "speed (m/s)");
        AssertNear.Equal(92.4 * Math.PI / 180, velocity.V1, 1e-12, "course (rad)");

        using var again = await client.PostAsync("/v1/vehicles/van-nmea/nmea", Text(body));
        var second = JsonDocument.Parse(await again.Content.ReadAsStringAsync()).RootElement;
        Assert.Equal((0, 6), (second.GetProperty("accepted").GetInt32(), second.GetProperty("duplicate").GetInt32()));
        Assert.Equal(6, (await RowsAsync(fleet.Id, "van-nmea")).Count);

        // The resend shows in the diagnostics' duplicate counts: three positions and three velocities.
        long ms = new DateTimeOffset(t).ToUnixTimeMilliseconds();
        var diagnostics = await DiagnosticsTests.GetOkAsync(fixture.Client(fleet.ReadKey), $"/v1/vehicles/van-nmea/diagnostics?from={ms - 60_000}&to={ms + 60_000}");
        Assert.Equal(3, diagnostics.GetProperty("sensors")[0].GetProperty("duplicate").GetInt32());
        Assert.Equal(3, diagnostics.GetProperty("sensors")[1].GetProperty("duplicate").GetInt32());
    }

    [Fact]
    public async Task Issue12_a_bad_rmc_speed_or_course_is_dropped_and_named_while_the_fix_is_stored()
    {
        var fleet = await fixture.NewFleetAsync();
        var t = DateTime.UtcNow.AddMinutes(-2);
        t = new DateTime(t.Year, t.Month, t.Day, t.Hour, t.Minute, t.Second, DateTimeKind.Utc);
        var north = Epoch(t, "4612.345", "00828.278", "15.5", "360.0", "1.2");
        var badCourse = Epoch(t.AddSeconds(1), "4612.346", "00828.289", "15.6", "361.5", "1.0");
        var badSpeed = Epoch(t.AddSeconds(2), "4612.347", "00828.301", "fast", "91.8", "2.0");
        string body = string.Join("\r\n", north.Rmc, north.Gga, badCourse.Rmc, badCourse.Gga, badSpeed.Rmc, badSpeed.Gga) + "\r\n";

        using var client = fixture.Client(fleet.IngestKey);
        using var response = await client.PostAsync("/v1/vehicles/van-rmc/nmea", Text(body));
        string text = await response.Content.ReadAsStringAsync();
        Assert.True(response.StatusCode == HttpStatusCode.OK, text);
        var answer = JsonDocument.Parse(text).RootElement;
        Assert.Equal((6, 0), (answer.GetProperty("accepted").GetInt32(), answer.GetProperty("rejected").GetInt32()));
        var results = answer.GetProperty("results").EnumerateArray().ToDictionary(r => r.GetProperty("line").GetInt32());
        static string[] Dropped(JsonElement line) => line.TryGetProperty("dropped_fields", out var list)
            ? [.. list.EnumerateArray().Select(d => d.GetProperty("field").GetString()!)]
            : [];
        Assert.Empty(Dropped(results[1]));
        Assert.Equal(["course"], Dropped(results[3]));
        Assert.Equal(["speed", "course"], Dropped(results[5]));
        Assert.Empty(Dropped(results[4]));

        long Us(DateTime utc) => (new DateTimeOffset(utc).UtcTicks - DateTime.UnixEpoch.Ticks) / 10;
        const string Velocities = "SELECT count(*) FROM measurements WHERE fleet_id = $1 AND kind = 1 AND time_us = $2";
        Assert.Equal(3, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1 AND kind = 0", fleet.Id));
        Assert.Equal(1, await fixture.CountAsync(Velocities + " AND v1 = 0", fleet.Id, Us(t)));
        Assert.Equal(1, await fixture.CountAsync(Velocities + " AND v1 IS NULL", fleet.Id, Us(t.AddSeconds(1))));
        Assert.Equal(0, await fixture.CountAsync(Velocities, fleet.Id, Us(t.AddSeconds(2))));
    }

    [Fact]
    public async Task Issue4_a_body_of_only_bad_lines_is_400_with_every_line_reported()
    {
        var fleet = await fixture.NewFleetAsync();
        var e = Epoch(DateTime.UtcNow.AddMinutes(-1), "4612.345", "00828.278", "10.0", "45.0", "1.0");
        using var client = fixture.Client(fleet.IngestKey);
        using var response = await client.PostAsync("/v1/vehicles/van-bad/nmea", Text(e.Gga + "\n" + e.Gga[..^3] + "\n"));
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var problem = await response.ProblemAsync();
        Assert.Contains("line 1: time:", problem.GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(2, problem.GetProperty("results").GetArrayLength());
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
        using var json = await client.PostAsync("/v1/vehicles/van-bad/nmea", new StringContent("[]", Encoding.UTF8, "application/json"));
        Assert.Equal(HttpStatusCode.UnsupportedMediaType, json.StatusCode);
        using var empty = await client.PostAsync("/v1/vehicles/van-bad/nmea", Text("\r\n\r\n"));
        Assert.Equal(HttpStatusCode.BadRequest, empty.StatusCode);
    }

    [Fact]
    public async Task Issue4_nmea_needs_an_ingest_key_and_stays_in_the_callers_fleet()
    {
        var a = await fixture.NewFleetAsync();
        var b = await fixture.NewFleetAsync();
        var e = Epoch(DateTime.UtcNow.AddMinutes(-1), "4612.345", "00828.278", "10.0", "45.0", "1.0");
        string body = e.Rmc + "\n" + e.Gga + "\n";
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(a.ReadKey).PostAsync("/v1/vehicles/van-n/nmea", Text(body))).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(a.AdminKey).PostAsync("/v1/vehicles/van-n/nmea", Text(body))).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Client(null).PostAsync("/v1/vehicles/van-n/nmea", Text(body))).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(a.IngestKey).PostAsync("/v1/vehicles/van-n/nmea", Text(body))).StatusCode);
        long ms = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds();
        string diagnostics = $"/v1/vehicles/van-n/diagnostics?from={ms - 600_000}&to={ms}";
        Assert.Equal(HttpStatusCode.NotFound, (await fixture.Client(b.ReadKey).GetAsync(diagnostics)).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(a.ReadKey).GetAsync(diagnostics)).StatusCode);

        // The same vehicle name sent by fleet B is B's own vehicle: A's rows stay A's, B's resend is not A's duplicate.
        var second = JsonDocument.Parse(await (await fixture.Client(b.IngestKey).PostAsync("/v1/vehicles/van-n/nmea", Text(body))).Content.ReadAsStringAsync()).RootElement;
        Assert.Equal(2, second.GetProperty("accepted").GetInt32());
        Assert.Equal(2, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", a.Id));
        Assert.Equal(2, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", b.Id));
    }

    private async Task<List<(short Kind, long TimeUs, double V0, double V1, double V2)>> RowsAsync(Guid fleetId, string vehicle)
    {
        var rows = new List<(short, long, double, double, double)>();
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new Npgsql.NpgsqlCommand(
            "SELECT kind, time_us, v0, coalesce(v1, 'NaN'), coalesce(v2, 'NaN') FROM measurements WHERE fleet_id = $1 AND vehicle_id = $2 ORDER BY time_us, kind", connection);
        command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = fleetId });
        command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = vehicle });
        await using var reader = await command.ExecuteReaderAsync();
        while (await reader.ReadAsync())
        {
            rows.Add((reader.GetInt16(0), reader.GetInt64(1), reader.GetDouble(2), reader.GetDouble(3), reader.GetDouble(4)));
        }

        return rows;
    }
}
