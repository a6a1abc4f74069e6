// Issue 14: a per-fleet vehicle quota, and silent vehicles leaving the in-memory activity table.
using System.Globalization;
using System.Net;
using System.Net.Http.Json;
using System.Text;
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Security;

[Collection(ServiceTests.Name)]
public sealed class VehicleQuotaTests(ServiceFixture fixture)
{
    private static string Wheel(params string[] vehicles) =>
        "[" + string.Join(",", vehicles.Select((v, i) => "{\"vehicle\":\"" + v + "\",\"kind\":\"wheel\",\"time\":\""
            + DateTimeOffset.UtcNow.AddSeconds(-10 + i * 0.01).ToString("O", CultureInfo.InvariantCulture) + "\",\"speed_mps\":2}")) + "]";

    private static StringContent Json(string body) => new(body, Encoding.UTF8, "application/json");

    [Fact]
    public async Task Issue14_new_vehicles_beyond_the_quota_are_rejected_naming_it()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        using var admin = fixture.Client(fleet.AdminKey);
        using var ingest = fixture.Client(fleet.IngestKey);
        var initial = await admin.GetFromJsonAsync<JsonElement>("/v1/fleet/quota");
        Assert.Equal("default", initial.GetProperty("source").GetString());
        Assert.Equal(5000, initial.GetProperty("max_vehicles").GetInt32());

        using (var put = await admin.PutAsync("/v1/fleet/quota", Json("{\"max_vehicles\":2}")))
        {
            Assert.Equal(HttpStatusCode.OK, put.StatusCode);
            var body = await put.Content.ReadFromJsonAsync<JsonElement>();
            Assert.Equal(2, body.GetProperty("max_vehicles").GetInt32());
            Assert.Equal("fleet", body.GetProperty("source").GetString());
        }

        Assert.Equal(2, (await ingest.IngestOkAsync(Wheel("q-a", "q-b"))).Accepted);
        using (var refused = await ingest.PostJsonAsync(Wheel("q-c")))
        {
            Assert.Equal(HttpStatusCode.BadRequest, refused.StatusCode);
            string detail = (await refused.ProblemAsync()).GetProperty("detail").GetString()!;
            Assert.Contains("vehicle: the fleet's vehicle quota of 2 vehicles is reached", detail, StringComparison.Ordinal);
        }

        // A known vehicle keeps sending beside a refused new one; nothing of the new one is stored.
        var mixed = await ingest.IngestOkAsync(Wheel("q-a", "q-d"));
        Assert.Equal(1, mixed.Accepted);
        Assert.Equal("vehicle", mixed.Results.Single(r => r.Status == "rejected").Field);
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM vehicles WHERE fleet_id = $1 AND vehicle_id IN ('q-c', 'q-d')", fleet.Id));
        Assert.Equal(2, (await admin.GetFromJsonAsync<JsonElement>("/v1/fleet/quota")).GetProperty("vehicles").GetInt32());

        // Another fleet is not bound by this quota.
        Assert.Equal(3, (await fixture.Client(other.IngestKey).IngestOkAsync(Wheel("q-a", "q-b", "q-c"))).Accepted);

        // Back to the default: the new vehicle is admitted.
        Assert.Equal(HttpStatusCode.OK, (await admin.PutAsync("/v1/fleet/quota", Json("{\"max_vehicles\":null}"))).StatusCode);
        Assert.Equal(1, (await ingest.IngestOkAsync(Wheel("q-c"))).Accepted);
    }

    [Theory]
    [InlineData("{\"max_vehicles\":0}", "max_vehicles: must be a whole number")]
    [InlineData("{\"max_vehicles\":\"10\"}", "max_vehicles: must be a whole number")]
    [InlineData("{\"max_vehicles\":1.5}", "max_vehicles: must be a whole number")]
    [InlineData("{}", "max_vehicles: is required")]
    [InlineData("{\"max\":3}", "max: unknown field")]
    public async Task Issue14_an_invalid_quota_names_the_field(string body, string expected)
    {
        var fleet = await fixture.NewFleetAsync();
        using var response = await fixture.Client(fleet.AdminKey).PutAsync("/v1/fleet/quota", Json(body));
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.StartsWith(expected, (await response.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(fleet.IngestKey).PutAsync("/v1/fleet/quota", Json("{\"max_vehicles\":3}"))).StatusCode);
    }

    [Fact]
    public void Issue14_the_activity_table_forgets_vehicles_silent_since_the_horizon_and_marks_returning_ones()
    {
        var activity = new VehicleActivity();
        var fleet = Guid.NewGuid();
        var now = DateTimeOffset.UtcNow;
        activity.Seed(fleet, "seeded", now.AddHours(-30));
        activity.Note(fleet, "old", now.AddHours(-25));
        activity.Note(fleet, "recent", now.AddMinutes(-1));
        Assert.False(activity.TakeFresh(fleet, "seeded"));
        Assert.True(activity.TakeFresh(fleet, "recent"));
        Assert.False(activity.TakeFresh(fleet, "recent"));

        var evicted = activity.EvictSilentSince(now.AddHours(-24));
        Assert.Equal(["old", "seeded"], evicted.Select(e => e.VehicleId).Order(StringComparer.Ordinal));
        Assert.Equal(1, activity.Count);
        activity.Note(fleet, "old", now);
        Assert.True(activity.TakeFresh(fleet, "old"));
        Assert.Equal(2, activity.Count);
    }

    [Fact]
    public void Issue14_a_vehicle_noted_after_the_judged_snapshot_waits_for_the_next_scan()
    {
        // A receipt noted while a scan runs is not in the snapshot the scan judged: evicting it then would drop a vehicle
        // whose silence was never judged (and never alerted).
        var activity = new VehicleActivity();
        var fleet = Guid.NewGuid();
        var now = DateTimeOffset.UtcNow;
        activity.Note(fleet, "judged", now.AddHours(-25));
        var judged = activity.Snapshot();
        activity.Note(fleet, "noted-during-scan", now.AddHours(-25));

        Assert.Equal(["judged"], activity.EvictSilentSince(now.AddHours(-24), judged).Select(e => e.VehicleId));
        Assert.Equal(["noted-during-scan"], activity.Snapshot().Select(e => e.Key.VehicleId));
    }

    [Fact]
    public async Task Issue14_a_silent_vehicle_leaves_the_table_and_its_alert_resolves_when_it_returns()
    {
        var fleet = await fixture.NewFleetAsync();
        var activity = fixture.Host.Services.GetRequiredService<VehicleActivity>();
        const string Sql = "SELECT count(*) FROM alerts WHERE fleet_id = $1 AND vehicle_id = 'gone-van' AND kind = 'vehicle_silent' AND state ";
        // Heard from 25 h ago: the next scan opens its silence alert, then evicts it (beyond Alerts:SilenceLookbackHours, 24 h).
        activity.Note(fleet.Id, "gone-van", DateTimeOffset.UtcNow.AddHours(-25));
        await WaitUntilAsync(async () => await fixture.CountAsync(Sql + "= 'open'", fleet.Id) == 1
            && !activity.Snapshot().Any(e => e.Key == (fleet.Id, "gone-van")));

        activity.Note(fleet.Id, "gone-van", DateTimeOffset.UtcNow);
        await WaitUntilAsync(async () => await fixture.CountAsync(Sql + "= 'resolved'", fleet.Id) == 1);
        Assert.Equal(0, await fixture.CountAsync(Sql + "<> 'resolved'", fleet.Id));
    }

    private static async Task WaitUntilAsync(Func<Task<bool>> condition)
    {
        // The shared host scans every 500 ms (Alerts:SilenceScanIntervalMs in ServiceFactory).
        for (int i = 0; i < 100; i++)
        {
            if (await condition())
            {
                return;
            }

            await Task.Delay(200);
        }

        Assert.Fail("the condition did not hold within 20 s");
    }
}
