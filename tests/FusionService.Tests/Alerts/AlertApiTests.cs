// REST alerts, alert rules and webhook subscriptions: shapes, filters, validation, fleet isolation and roles.
using System.Net;
using System.Net.Http.Json;
using System.Text;
using System.Text.Json;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Alerts;

[Collection(ServiceTests.Name)]
public sealed class AlertApiTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Gated_burst_is_listed_filtered_acknowledged_by_admin_only_and_invisible_to_other_fleets()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        var drive = AlertDrive.WithJumps("van-alert", seed: 401);
        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey), drive);
        using var read = fixture.Client(fleet.ReadKey);
        var alert = Assert.Single(await AlertDrive.WaitForAlertsAsync(read, "kind=gated_burst"));
        Assert.Equal(fleet.Id, alert.GetProperty("fleet_id").GetGuid());
        Assert.Equal("van-alert", alert.GetProperty("vehicle").GetString());
        Assert.Equal("warning", alert.GetProperty("severity").GetString());
        Assert.Equal("open", alert.GetProperty("state").GetString());
        Assert.Equal(JsonValueKind.Null, alert.GetProperty("ended_at").ValueKind);
        Assert.Equal(3, alert.GetProperty("count").GetInt32());
        Assert.StartsWith("3 GNSS fixes gated in ", alert.GetProperty("technical_summary").GetString(), StringComparison.Ordinal);

        // Issue 15: the summary is plain words without filter terms or the count; links lead to the van at the alert's time.
        string summary = alert.GetProperty("summary").GetString()!;
        Assert.StartsWith("Several position reports did not fit the van's path", summary, StringComparison.Ordinal);
        Assert.DoesNotMatch(@"\d|gated|NIS|chi-square|innovation", summary);
        var links = alert.GetProperty("links");
        Assert.Equal(alert.GetProperty("started_at").GetDateTimeOffset(), links.GetProperty("view_at").GetDateTimeOffset());
        using (var track = await read.GetAsync(links.GetProperty("track").GetString()))
        {
            Assert.Equal(HttpStatusCode.OK, track.StatusCode);
        }

        using (var explain = await read.GetAsync(links.GetProperty("explain").GetString()))
        {
            Assert.Equal(HttpStatusCode.OK, explain.StatusCode);
        }

        Assert.Equal("/v1/vehicles/van-alert/state", links.GetProperty("state").GetString());
        Assert.Equal(3, alert.GetProperty("details").GetProperty("by_sensor").GetProperty("gnss_position").GetInt32());
        string id = alert.GetProperty("id").GetString()!;

        Assert.Empty(await ListAsync(read, "vehicle=van-other"));
        Assert.Empty(await ListAsync(read, "state=resolved"));
        Assert.Empty(await ListAsync(read, "kind=track_reset"));
        Assert.Single(await ListAsync(read, "state=open&vehicle=van-alert&limit=5"));
        long startMs = alert.GetProperty("started_at").GetDateTimeOffset().ToUnixTimeMilliseconds();
        Assert.Empty(await ListAsync(read, "to=" + (startMs - 1).ToString(System.Globalization.CultureInfo.InvariantCulture)));
        Assert.Single(await ListAsync(read, "from=2020-01-01T00:00:00Z&to=" + (startMs + 1).ToString(System.Globalization.CultureInfo.InvariantCulture)));
        await AssertProblemAsync(await read.GetAsync("/v1/alerts?state=closed"), HttpStatusCode.BadRequest, "state:");
        await AssertProblemAsync(await read.GetAsync("/v1/alerts?kind=jump"), HttpStatusCode.BadRequest, "kind:");
        await AssertProblemAsync(await read.GetAsync("/v1/alerts?limit=0"), HttpStatusCode.BadRequest, "limit:");
        await AssertProblemAsync(await read.GetAsync("/v1/alerts?from=yesterday"), HttpStatusCode.BadRequest, "from:");

        using var otherRead = fixture.Client(other.ReadKey);
        Assert.Empty(await ListAsync(otherRead, string.Empty));
        using var admin = fixture.Client(fleet.AdminKey);
        using var otherAdmin = fixture.Client(other.AdminKey);
        await AssertProblemAsync(await otherAdmin.PostAsync("/v1/alerts/" + id + "/acknowledge", null), HttpStatusCode.NotFound, "id:");
        await AssertProblemAsync(await admin.PostAsync("/v1/alerts/" + Guid.NewGuid().ToString("D") + "/acknowledge", null), HttpStatusCode.NotFound, "id:");

        // Issue 14: a read key sees alerts but cannot acknowledge them; an admin key can, and the alert keeps who and when.
        await AssertProblemAsync(await read.PostAsync("/v1/alerts/" + id + "/acknowledge", null), HttpStatusCode.Forbidden, "this endpoint needs a key with role admin; the key has role read");
        Assert.Single(await ListAsync(read, "state=open"));
        Assert.False(alert.TryGetProperty("acknowledged", out _));

        var before = DateTimeOffset.UtcNow;
        using var acknowledged = await admin.PostAsync("/v1/alerts/" + id + "/acknowledge", null);
        Assert.Equal(HttpStatusCode.OK, acknowledged.StatusCode);
        var body = await acknowledged.Content.ReadFromJsonAsync<JsonElement>();
        Assert.Equal("acknowledged", body.GetProperty("state").GetString());
        Assert.Equal(id, body.GetProperty("id").GetString());
        var by = body.GetProperty("acknowledged");
        Assert.Equal("test", by.GetProperty("key_label").GetString());
        Assert.InRange(by.GetProperty("at").GetDateTimeOffset(), before.AddSeconds(-5), DateTimeOffset.UtcNow.AddSeconds(5));
        Assert.Equal(1, await fixture.CountAsync(
            "SELECT count(*) FROM alerts a JOIN api_keys k ON k.key_id = a.acknowledged_by_key_id WHERE a.alert_id = $1 AND k.role = 'admin' AND k.key_id = $2",
            Guid.Parse(id), by.GetProperty("key_id").GetGuid()));

        // The list shows the same acknowledgement; acknowledging again changes nothing. It is no longer open but still unresolved.
        Assert.Empty(await ListAsync(read, "state=open"));
        Assert.Equal(id, Assert.Single(await ListAsync(read, "state=unresolved")).GetProperty("id").GetString());
        var listed = Assert.Single(await ListAsync(read, "state=acknowledged"));
        Assert.Equal(by.GetProperty("at").GetDateTimeOffset(), listed.GetProperty("acknowledged").GetProperty("at").GetDateTimeOffset());
        using var again = await admin.PostAsync("/v1/alerts/" + id + "/acknowledge", null);
        var againBody = await again.Content.ReadFromJsonAsync<JsonElement>();
        Assert.Equal(by.GetProperty("at").GetDateTimeOffset(), againBody.GetProperty("acknowledged").GetProperty("at").GetDateTimeOffset());
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM alerts WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public async Task Alert_rules_are_validated_per_field_stored_per_fleet_and_need_admin_to_change()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        using var admin = fixture.Client(fleet.AdminKey);
        var defaults = await admin.GetFromJsonAsync<JsonElement>("/v1/alert-rules");
        Assert.Equal(30, defaults.GetProperty("gated_burst").GetProperty("window_s").GetDouble());
        Assert.Equal(900, defaults.GetProperty("vehicle_silent").GetProperty("silent_s").GetDouble());

        await AssertProblemAsync(await PutAsync(admin, """{"gated_burst":{"window_s":0}}"""), HttpStatusCode.BadRequest, "gated_burst.window_s:");
        await AssertProblemAsync(await PutAsync(admin, """{"wheel_scale_out_of_band":{"lower":1.0,"upper":1.0}}"""), HttpStatusCode.BadRequest, "wheel_scale_out_of_band.upper:");
        await AssertProblemAsync(await PutAsync(admin, """{"inconsistent_sensor":{"sensors":["radar"]}}"""), HttpStatusCode.BadRequest, "inconsistent_sensor.sensors:");
        await AssertProblemAsync(await PutAsync(admin, """{"gated_burst":{"windows":3}}"""), HttpStatusCode.BadRequest, "body:");
        await AssertProblemAsync(await PutAsync(fixture.Client(fleet.ReadKey), """{"gated_burst":{"window_s":20}}"""), HttpStatusCode.Forbidden, null);

        using var put = await PutAsync(admin, """{"gated_burst":{"window_s":20,"min_count":4},"vehicle_silent":{"silent_s":600}}""");
        Assert.Equal(HttpStatusCode.OK, put.StatusCode);
        var stored = await fixture.Client(fleet.ReadKey).GetFromJsonAsync<JsonElement>("/v1/alert-rules");
        Assert.Equal(20, stored.GetProperty("gated_burst").GetProperty("window_s").GetDouble());
        Assert.Equal(4, stored.GetProperty("gated_burst").GetProperty("min_count").GetInt32());
        Assert.Equal(600, stored.GetProperty("vehicle_silent").GetProperty("silent_s").GetDouble());
        Assert.Equal(0.97, stored.GetProperty("wheel_scale_out_of_band").GetProperty("lower").GetDouble());
        var untouched = await fixture.Client(other.ReadKey).GetFromJsonAsync<JsonElement>("/v1/alert-rules");
        Assert.Equal(30, untouched.GetProperty("gated_burst").GetProperty("window_s").GetDouble());
    }

    [Fact]
    public async Task Webhooks_are_validated_listed_without_secret_deleted_and_scoped_to_the_fleet()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        using var admin = fixture.Client(fleet.AdminKey);
        await AssertProblemAsync(await admin.PostAsJsonAsync("/v1/webhooks", new { url = "ftp://example.invalid/x", secret = "0123456789abcdef" }), HttpStatusCode.BadRequest, "url:");
        await AssertProblemAsync(await admin.PostAsJsonAsync("/v1/webhooks", new { url = "https://example.invalid/x", secret = "short" }), HttpStatusCode.BadRequest, "secret:");
        using var created = await admin.PostAsJsonAsync("/v1/webhooks", new { url = "https://example.invalid/hook", secret = "0123456789abcdef-secret" });
        Assert.Equal(HttpStatusCode.Created, created.StatusCode);
        string id = (await created.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("id").GetString()!;
        string listed = await admin.GetStringAsync("/v1/webhooks");
        Assert.Contains(id, listed, StringComparison.Ordinal);
        Assert.DoesNotContain("secret", listed, StringComparison.Ordinal);
        using var otherAdmin = fixture.Client(other.AdminKey);
        Assert.Equal(0, (await otherAdmin.GetFromJsonAsync<JsonElement>("/v1/webhooks")).GetProperty("webhooks").GetArrayLength());
        await AssertProblemAsync(await otherAdmin.DeleteAsync("/v1/webhooks/" + id), HttpStatusCode.NotFound, "id:");
        using (var deleted = await admin.DeleteAsync("/v1/webhooks/" + id))
        {
            Assert.Equal(HttpStatusCode.NoContent, deleted.StatusCode);
        }

        Assert.Equal(0, (await admin.GetFromJsonAsync<JsonElement>("/v1/webhooks")).GetProperty("webhooks").GetArrayLength());
    }

    [Fact]
    public async Task Role_boundaries_of_the_alert_endpoints()
    {
        var fleet = await fixture.NewFleetAsync();
        using var ingest = fixture.Client(fleet.IngestKey);
        using var read = fixture.Client(fleet.ReadKey);
        using var anonymous = fixture.Client(null);
        Assert.Equal(HttpStatusCode.Unauthorized, (await anonymous.GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await anonymous.GetAsync("/v1/webhooks")).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await ingest.GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await ingest.GetAsync("/v1/alert-rules")).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await ingest.PostAsync("/v1/alerts/" + Guid.NewGuid().ToString("D") + "/acknowledge", null)).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await read.PostAsync("/v1/alerts/" + Guid.NewGuid().ToString("D") + "/acknowledge", null)).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await read.GetAsync("/v1/webhooks/" + Guid.NewGuid().ToString("D") + "/dead-letters")).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await read.PostAsync("/v1/webhooks/" + Guid.NewGuid().ToString("D") + "/dead-letters/requeue", null)).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await read.GetAsync("/v1/webhooks")).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await read.PostAsJsonAsync("/v1/webhooks", new { url = "https://example.invalid/", secret = "0123456789abcdef" })).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await read.DeleteAsync("/v1/webhooks/" + Guid.NewGuid().ToString("D"))).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await read.GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(fleet.AdminKey).GetAsync("/v1/alerts")).StatusCode);
    }

    [Fact]
    public async Task Vehicle_that_stops_sending_gets_vehicle_silent_and_it_resolves_when_data_returns()
    {
        var fleet = await fixture.NewFleetAsync();
        using var admin = fixture.Client(fleet.AdminKey);
        using (var put = await PutAsync(admin, """{"vehicle_silent":{"silent_s":2}}"""))
        {
            Assert.Equal(HttpStatusCode.OK, put.StatusCode);
        }

        var drive = TelemetryDrive.Create("van-quiet", TelemetryDrive.StartUs(TimeSpan.FromMinutes(10)), seed: 402);
        using var ingest = fixture.Client(fleet.IngestKey);
        await AlertDrive.IngestAsync(ingest, drive, 0, 200);
        var silent = Assert.Single(await AlertDrive.WaitForAlertsAsync(admin, "kind=vehicle_silent"));
        Assert.Equal("van-quiet", silent.GetProperty("vehicle").GetString());
        Assert.True(silent.GetProperty("details").GetProperty("silent_s").GetDouble() > 2.0);
        await AlertDrive.IngestAsync(ingest, drive, 200, 400);
        var resolved = Assert.Single(await AlertDrive.WaitForAlertsAsync(admin, "kind=vehicle_silent&state=resolved"));
        Assert.Equal(silent.GetProperty("id").GetString(), resolved.GetProperty("id").GetString());
        Assert.NotEqual(JsonValueKind.Null, resolved.GetProperty("ended_at").ValueKind);
    }

    [Fact]
    public async Task Issue15_alerts_page_with_a_cursor_severity_first_then_newest()
    {
        var fleet = await fixture.NewFleetAsync();
        var start = new DateTimeOffset(2026, 5, 1, 8, 0, 0, TimeSpan.Zero);
        var inserted = new List<(string Severity, DateTimeOffset StartedAt, string State)>();
        string[] severities = ["info", "warning", "critical", "warning", "info", "critical", "warning"];
        for (int i = 0; i < severities.Length; i++)
        {
            string state = i == 3 ? "resolved" : i == 4 ? "acknowledged" : "open";
            var startedAt = start.AddMinutes(i);
            inserted.Add((severities[i], startedAt, state));
            await using var connection = await fixture.Store.OpenConnectionAsync();
            await using var command = new Npgsql.NpgsqlCommand(
                "INSERT INTO alerts (alert_id, fleet_id, vehicle_id, kind, severity, state, started_at, ended_at, last_seen_at, count, summary, details) "
                + "VALUES (gen_random_uuid(), $1, $2, 'gated_burst', $3, $4, $5, $6, $5, 1, 'test', '{}'::jsonb)", connection);
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = fleet.Id });
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = "van-" + i.ToString(System.Globalization.CultureInfo.InvariantCulture) });
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = severities[i] });
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = state });
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = startedAt });
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = state == "resolved" ? startedAt.AddMinutes(1) : DBNull.Value, NpgsqlDbType = NpgsqlTypes.NpgsqlDbType.TimestampTz });
            await command.ExecuteNonQueryAsync();
        }

        using var read = fixture.Client(fleet.ReadKey);
        static int Rank(string s) => s switch { "critical" => 3, "warning" => 2, _ => 1 };
        foreach (var (query, expected) in new[]
        {
            ("sort=severity", inserted.OrderByDescending(a => Rank(a.Severity)).ThenByDescending(a => a.StartedAt).ToList()),
            ("sort=newest", inserted.OrderByDescending(a => a.StartedAt).ToList()),
            ("state=unresolved&sort=severity", inserted.Where(a => a.State != "resolved").OrderByDescending(a => Rank(a.Severity)).ThenByDescending(a => a.StartedAt).ToList()),
            ("state=open&sort=severity", inserted.Where(a => a.State == "open").OrderByDescending(a => Rank(a.Severity)).ThenByDescending(a => a.StartedAt).ToList()),
        })
        {
            // Pages of two until next_cursor is null: every alert once, in the order asked for.
            var seen = new List<(string, DateTimeOffset)>();
            string? cursor = null;
            int pages = 0;
            do
            {
                using var response = await read.GetAsync("/v1/alerts?" + query + "&limit=2" + (cursor is null ? string.Empty : "&cursor=" + Uri.EscapeDataString(cursor)));
                Assert.Equal(HttpStatusCode.OK, response.StatusCode);
                Assert.Single(response.Headers.GetValues("Fusion-Caution"));
                var body = await response.Content.ReadFromJsonAsync<JsonElement>();
                seen.AddRange(body.GetProperty("alerts").EnumerateArray().Select(a => (a.GetProperty("severity").GetString()!, a.GetProperty("started_at").GetDateTimeOffset())));
                cursor = body.GetProperty("next_cursor").ValueKind == JsonValueKind.Null ? null : body.GetProperty("next_cursor").GetString();
                pages++;
            }
            while (cursor is not null && pages < 10);

            Assert.Equal(expected.Select(a => (a.Severity, a.StartedAt)), seen);
            Assert.Equal((expected.Count + 1) / 2, pages);
        }

        await AssertProblemAsync(await read.GetAsync("/v1/alerts?sort=oldest"), HttpStatusCode.BadRequest, "sort:");
        await AssertProblemAsync(await read.GetAsync("/v1/alerts?cursor=abc"), HttpStatusCode.BadRequest, "cursor:");
        await AssertProblemAsync(await read.GetAsync("/v1/alerts?cursor=%00"), HttpStatusCode.BadRequest, "cursor:");
    }

    private static async Task<JsonElement[]> ListAsync(HttpClient client, string query)
    {
        var body = await client.GetFromJsonAsync<JsonElement>("/v1/alerts?" + query);
        return [.. body.GetProperty("alerts").EnumerateArray()];
    }

    private static Task<HttpResponseMessage> PutAsync(HttpClient client, string json) =>
        client.PutAsync("/v1/alert-rules", new StringContent(json, Encoding.UTF8, "application/json"));

    private static async Task AssertProblemAsync(HttpResponseMessage response, HttpStatusCode status, string? detailPrefix)
    {
        using (response)
        {
            string text = await response.Content.ReadAsStringAsync();
            Assert.True(status == response.StatusCode, $"{(int)response.StatusCode}: {text}");
            var problem = await response.ProblemAsync();
            if (detailPrefix is not null)
            {
                Assert.StartsWith(detailPrefix, problem.GetProperty("detail").GetString(), StringComparison.Ordinal);
            }
        }
    }
}
