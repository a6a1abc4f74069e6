// 503 with Retry-After while PostgreSQL is down; nothing acknowledged is lost once it is back.
using System.Net;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class DatabaseOutageTests(ServiceFixture fixture)
{
    [Fact]
    public async Task A_history_read_after_the_database_restarted_is_answered_at_once()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-reread", TelemetryDrive.StartUs(TimeSpan.FromMinutes(4)), seed: 62);
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Security:KeyCacheSeconds"] = "60" });
        await fixture.Client(fleet.IngestKey, host).IngestOkAsync(drive.Body(0, 200));
        using var read = fixture.Client(fleet.ReadKey, host);
        string from = DateTimeOffset.UtcNow.AddMinutes(-10).ToUnixTimeMilliseconds().ToString(System.Globalization.CultureInfo.InvariantCulture);
        string to = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds().ToString(System.Globalization.CultureInfo.InvariantCulture);
        string track = "/v1/vehicles/van-reread/track?kind=raw&format=csv&from=" + from + "&to=" + to;
        using (var before = await read.GetAsync(track))
        {
            Assert.Equal(HttpStatusCode.OK, before.StatusCode);
        }

        // The history reads' pool now holds an idle connection; a restart of PostgreSQL closes it on the server's side.
        await fixture.StopServerAsync();
        await fixture.StartServerAsync();
        using var after = await read.GetAsync(track);
        Assert.Equal(HttpStatusCode.OK, after.StatusCode);
    }

    /// <summary>
    /// The light reads (the fleet list, a vehicle's state, the fleet's receivers, alerts and their rules, the base layer,
    /// keys, quota and webhooks) run on pools whose idle connections the
    /// server closed (a restart of PostgreSQL, or here the host's backends terminated, so that no background loop of the
    /// service notices a failure and clears the pools first): each retries once on a fresh connection instead of
    /// answering 500 (57P01, "terminating connection due to administrator command", seen in CI after a restart).
    /// </summary>
    [Fact]
    public async Task Light_reads_after_a_database_restart_answer_without_an_error()
    {
        var fleet = await fixture.NewFleetAsync();
        // Its own application name, so that only this host's connections are terminated below (its history-read pool names
        // itself fusion-history-reads, as every host's does: those opened after this instant are this host's).
        long hostStartUs = await fixture.CountAsync("SELECT (extract(epoch FROM clock_timestamp()) * 1e6)::bigint");
        await using var host = new ServiceFactory(
            fixture.ConnectionString + ";Application Name=light-reads-test", new Dictionary<string, string?> { ["Security:KeyCacheSeconds"] = "60" });
        await fixture.Client(fleet.IngestKey, host).IngestOkAsync(StartingFixes.Two("van-light"));
        using var read = fixture.Client(fleet.ReadKey, host);
        using var admin = fixture.Client(fleet.AdminKey, host);
        (HttpClient Client, string Url)[] reads =
        [
            (read, "/v1/fleet/receivers"), (read, "/v1/vehicles"), (read, "/v1/vehicles/van-light/state"), (read, "/v1/alerts"),
            (read, "/v1/alert-rules"), (read, "/v1/base-layer"), (admin, "/v1/keys"), (admin, "/v1/fleet/quota"), (admin, "/v1/webhooks"),
        ];
        foreach (var (client, url) in reads)
        {
            using var before = await client.GetAsync(url);
            Assert.True(before.StatusCode == HttpStatusCode.OK, url + ": " + (int)before.StatusCode);
        }

        Assert.True(await fixture.CountAsync(
            "SELECT count(*) FILTER (WHERE pg_terminate_backend(pid)) FROM pg_stat_activity WHERE application_name = 'light-reads-test' "
            + "OR (application_name = 'fusion-history-reads' AND backend_start >= to_timestamp($1 / 1e6))", hostStartUs) > 1);
        var failed = new List<string>();
        foreach (var (client, url) in reads)
        {
            using var after = await client.GetAsync(url);
            if (after.StatusCode != HttpStatusCode.OK)
            {
                failed.Add(url + ": " + (int)after.StatusCode);
            }
        }

        Assert.Empty(failed);

    }

    [Fact]
    public async Task Ingest_answers_503_while_the_database_is_down_and_recovers_without_loss()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-outage", TelemetryDrive.StartUs(TimeSpan.FromMinutes(8)), seed: 61);
        // Keys cached for a minute, so the request reaches the writer while the database is down.
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Security:KeyCacheSeconds"] = "60" });
        using var client = fixture.Client(fleet.IngestKey, host);
        int acknowledged = (await client.IngestOkAsync(drive.Body(0, 100))).Accepted;

        await fixture.StopServerAsync();
        try
        {
            using var refused = await client.PostJsonAsync(drive.Body(100, 200));
            Assert.Equal(HttpStatusCode.ServiceUnavailable, refused.StatusCode);
            Assert.True(refused.Headers.RetryAfter?.Delta > TimeSpan.Zero, "Retry-After missing");
            Assert.Contains("database is unavailable", (await refused.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
            using var ready = await client.GetAsync("/health/ready");
            Assert.Equal(HttpStatusCode.ServiceUnavailable, ready.StatusCode);
            Assert.Contains("PostgreSQL unreachable", (await ready.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
        }
        finally
        {
            await fixture.StartServerAsync();
        }

        // The client resends what was refused, as Retry-After asks (a connection broken by the restart may cost one
        // more 503, after which the pool is cleared), then sends the rest.
        for (int from = 100; from < drive.Messages.Count; from += 200)
        {
            for (int attempt = 0; ; attempt++)
            {
                using var response = await client.PostJsonAsync(drive.Body(from, Math.Min(from + 200, drive.Messages.Count)));
                if (response.StatusCode == HttpStatusCode.ServiceUnavailable && attempt < 5)
                {
                    await Task.Delay(500);
                    continue;
                }

                Assert.Equal(HttpStatusCode.OK, response.StatusCode);
                var result = System.Text.Json.JsonSerializer.Deserialize<FusionService.Ingest.IngestResponse>(await response.Content.ReadAsStringAsync(), Api.Json)!;
                acknowledged += result.Accepted;
                break;
            }
        }

        // The shared host lost its connections too: it recovers on its own after one failed check.
        using var probe = fixture.Client(null);
        for (int attempt = 0; attempt < 5 && (await probe.GetAsync("/health/ready")).StatusCode != HttpStatusCode.OK; attempt++)
        {
            await Task.Delay(200);
        }

        Assert.Equal(drive.Messages.Count, acknowledged);
        Assert.Equal(drive.Messages.Sum(m => m.Core.Length), await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
        var oracle = new TrackOracle();
        oracle.Process(drive.Messages.Select(m => m.Core));
        Assert.Equal(oracle.Response("van-outage"), await fixture.Client(fleet.ReadKey, host).StateAsync("van-outage"));
    }

    [Fact]
    public async Task A_full_write_queue_answers_503_at_once_and_never_buffers_more()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-queue", TelemetryDrive.StartUs(TimeSpan.FromMinutes(13)), seed: 62);
        // One waiting request at most, and a long commit window, so the second request finds the queue full.
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Ingest:QueueCapacity"] = "1",
            ["Ingest:CommitWindowMs"] = "800",
        });
        using var client = fixture.Client(fleet.IngestKey, host);
        Assert.Equal(HttpStatusCode.OK, (await client.PostJsonAsync(drive.Body(0, 10))).StatusCode);
        var waiting = client.PostJsonAsync(drive.Body(10, 20));
        await Task.Delay(200);
        using var refused = await client.PostJsonAsync(drive.Body(20, 30));
        Assert.Equal(HttpStatusCode.ServiceUnavailable, refused.StatusCode);
        Assert.Contains("write queue is full", (await refused.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
        using var accepted = await waiting;
        Assert.Equal(HttpStatusCode.OK, accepted.StatusCode);
        Assert.Equal(drive.Messages.Take(20).Sum(m => m.Core.Length), await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
    }
}
