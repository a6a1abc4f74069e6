// Alerts are applied idempotently with their webhook outbox rows in one transaction; the outbox claims with SKIP LOCKED.
using FusionService.Storage.Alerts;
using FusionService.Storage.Fleets;
using FusionService.Storage.Tests.Infrastructure;

namespace FusionService.Storage.Tests.Alerts;

[Collection(PostgresCollection.Name)]
public sealed class AlertRepositoryTests(PostgresFixture server)
{
    private static readonly DateTimeOffset T0 = new(2026, 12, 2, 8, 0, 0, TimeSpan.Zero);

    [Fact]
    public async Task Repeated_observations_update_one_alert_and_a_replayed_episode_is_not_raised_again()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("Alerts depot");
        await new WebhookRepository(schema.DataSource).CreateAsync(fleet, "https://a.example.invalid/", "0123456789abcdef");
        await new WebhookRepository(schema.DataSource).CreateAsync(fleet, "https://b.example.invalid/", "0123456789abcdef");
        var alerts = new AlertRepository(schema.DataSource);

        var opened = await alerts.ApplyAsync(fleet, "van-1", [Raise(T0, T0.AddSeconds(4), 3)], Payload);
        Assert.Equal(2, opened.Deliveries);
        var again = await alerts.ApplyAsync(fleet, "van-1", [Raise(T0, T0.AddSeconds(4), 3)], Payload);
        Assert.Empty(again.Changed);
        var smaller = await alerts.ApplyAsync(fleet, "van-1", [Raise(T0.AddSeconds(2), T0.AddSeconds(4), 2)], Payload);
        Assert.Empty(smaller.Changed);
        var grown = await alerts.ApplyAsync(fleet, "van-1", [Raise(T0, T0.AddSeconds(9), 5)], Payload);
        var row = Assert.Single(grown.Changed);
        Assert.Equal(5, row.Count);
        Assert.Equal(0, grown.Deliveries);
        Assert.Equal("open", row.State);

        var resolved = await alerts.ApplyAsync(fleet, "van-1", [Raise(T0, T0.AddSeconds(9), 5) with { Resolve = true }], Payload);
        Assert.Equal("resolved", Assert.Single(resolved.Changed).State);
        Assert.Equal(T0.AddSeconds(9), resolved.Changed[0].EndedAt);
        Assert.Equal(2, resolved.Deliveries);

        // The same episode seen again (a track re-processing stored data) must not open a second alert...
        var replay = await alerts.ApplyAsync(fleet, "van-1", [Raise(T0.AddSeconds(1), T0.AddSeconds(4), 2)], Payload);
        Assert.Empty(replay.Changed);
        // ...but a later episode does.
        var later = await alerts.ApplyAsync(fleet, "van-1", [Raise(T0.AddMinutes(10), T0.AddMinutes(10), 3)], Payload);
        Assert.Single(later.Changed);
        Assert.Equal(2, (await alerts.ListAsync(new AlertQuery(fleet, Kind: "gated_burst"))).Count);
        Assert.Equal(6L, await schema.ScalarAsync<long>("SELECT count(*) FROM webhook_outbox"));
    }

    [Fact]
    public async Task Claims_are_disjoint_and_failed_rows_come_back_after_their_delay()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("Outbox depot");
        await new WebhookRepository(schema.DataSource).CreateAsync(fleet, "https://a.example.invalid/", "0123456789abcdef");
        var alerts = new AlertRepository(schema.DataSource);
        for (int i = 0; i < 6; i++)
        {
            await alerts.ApplyAsync(fleet, "van-" + i.ToString(System.Globalization.CultureInfo.InvariantCulture), [Raise(T0, T0, 3)], Payload);
        }

        var outbox = new WebhookOutbox(schema.DataSource);
        var claims = await Task.WhenAll(Enumerable.Range(0, 3).Select(_ => outbox.ClaimDueAsync(4, TimeSpan.FromMinutes(1))));
        var ids = claims.SelectMany(c => c.Select(d => d.DeliveryId)).ToList();
        Assert.Equal(6, ids.Count);
        Assert.Equal(6, ids.Distinct().Count());
        Assert.Empty(await outbox.ClaimDueAsync(10, TimeSpan.FromMinutes(1)));

        await outbox.RescheduleAsync(ids[0], TimeSpan.Zero, "HTTP 500 Internal Server Error");
        await outbox.MarkDeliveredAsync(ids[1]);
        var due = Assert.Single(await outbox.ClaimDueAsync(10, TimeSpan.FromMinutes(1)));
        Assert.Equal(ids[0], due.DeliveryId);
        Assert.Equal(1, due.Attempts);
        Assert.Equal("HTTP 500 Internal Server Error", await schema.ScalarAsync<string>("SELECT last_error FROM webhook_outbox WHERE delivery_id = $1", ids[0]));
        Assert.Equal(1L, await schema.ScalarAsync<long>("SELECT count(*) FROM webhook_outbox WHERE delivered_at IS NOT NULL"));
    }

    private static AlertObservation Raise(DateTimeOffset start, DateTimeOffset seen, int count) =>
        new("gated_burst", "warning", start, seen, count, count.ToString(System.Globalization.CultureInfo.InvariantCulture) + " GNSS fixes gated", "{\"count\":" + count.ToString(System.Globalization.CultureInfo.InvariantCulture) + "}", false);

    private static string Payload(AlertRow row) => "{\"id\":\"" + row.AlertId.ToString("D") + "\"}";
}
