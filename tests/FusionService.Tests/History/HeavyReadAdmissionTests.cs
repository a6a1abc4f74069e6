// Issue 14: history reads are admitted by a global and a per-fleet limit, read from a pool of their own with a
// statement timeout, and cannot make ingest refuse acknowledgements.
using System.Globalization;
using System.Net;
using FusionService.Database;
using FusionService.History;
using FusionService.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Tests.History;

[Collection(ServiceTests.Name)]
public sealed class HeavyReadAdmissionTests(ServiceFixture fixture)
{
    private static string Window24h(string vehicle, long endUs) =>
        "/v1/vehicles/" + vehicle + "/track?kind=smoothed&from=" + HistoryDrive.Time(endUs - 24 * 3_600_000_000L) + "&to=" + HistoryDrive.Time(endUs);

    [Fact]
    public async Task Issue14_the_gate_refuses_a_fleet_over_its_share_and_the_process_when_full()
    {
        var options = Microsoft.Extensions.Options.Options.Create(new HeavyReadOptions { MaxConcurrent = 3, MaxConcurrentPerFleet = 2, QueueTimeoutMs = 0 });
        using var gate = new HeavyReadGate(options, new FusionService.Operations.ServiceMetrics());
        Guid a = Guid.NewGuid(), b = Guid.NewGuid(), c = Guid.NewGuid();
        var a1 = await gate.TryEnterAsync(a, CancellationToken.None);
        var a2 = await gate.TryEnterAsync(a, CancellationToken.None);
        Assert.Equal(HeavyReadRefusal.FleetBusy, (await gate.TryEnterAsync(a, CancellationToken.None)).Refusal);
        var b1 = await gate.TryEnterAsync(b, CancellationToken.None);
        Assert.Equal(3, gate.InFlight);
        Assert.Equal(HeavyReadRefusal.ServiceBusy, (await gate.TryEnterAsync(c, CancellationToken.None)).Refusal);
        // A refused request holds nothing: after one release, fleet c gets the freed slot.
        a1.Slot!.Dispose();
        a1.Slot.Dispose();
        var c1 = await gate.TryEnterAsync(c, CancellationToken.None);
        Assert.Equal(HeavyReadRefusal.None, c1.Refusal);
        Assert.Equal(HeavyReadRefusal.ServiceBusy, (await gate.TryEnterAsync(a, CancellationToken.None)).Refusal);
        Assert.Equal((1L, 2L), (gate.RefusedFleet, gate.RefusedBusy));
        a2.Slot!.Dispose();
        b1.Slot!.Dispose();
        c1.Slot!.Dispose();
        Assert.Equal(0, gate.InFlight);
    }

    [Fact]
    public async Task Issue14_a_full_fleet_gets_429_and_a_full_service_503_both_with_retry_after()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["HeavyReads:MaxConcurrent"] = "2",
            ["HeavyReads:MaxConcurrentPerFleet"] = "2",
            ["HeavyReads:QueueTimeoutMs"] = "0",
            ["HeavyReads:RetryAfterS"] = "3",
        });
        using var read = fixture.Client(fleet.ReadKey, host);
        using var otherRead = fixture.Client(other.ReadKey, host);
        var gate = host.Services.GetRequiredService<HeavyReadGate>();
        var held1 = await gate.TryEnterAsync(fleet.Id, CancellationToken.None);
        var held2 = await gate.TryEnterAsync(fleet.Id, CancellationToken.None);
        long nowUs = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000;

        foreach (var path in new[] { Window24h("any", nowUs), "/v1/vehicles/any/distance?from=" + HistoryDrive.Time(nowUs - 3_600_000_000L) + "&to=" + HistoryDrive.Time(nowUs),
            "/v1/vehicles/any/diagnostics?from=" + HistoryDrive.Time(nowUs - 3_600_000_000L) + "&to=" + HistoryDrive.Time(nowUs), "/v1/vehicles/any/explain?time=" + HistoryDrive.Time(nowUs) })
        {
            using var fleetFull = await read.GetAsync(path);
            Assert.Equal(HttpStatusCode.TooManyRequests, fleetFull.StatusCode);
            Assert.Equal("3", fleetFull.Headers.GetValues("Retry-After").Single());
            Assert.Equal("HeavyReads:MaxConcurrentPerFleet", (await fleetFull.ProblemAsync()).GetProperty("limit").GetString());
        }

        using var serviceFull = await otherRead.GetAsync(Window24h("any", nowUs));
        Assert.Equal(HttpStatusCode.ServiceUnavailable, serviceFull.StatusCode);
        Assert.Equal("3", serviceFull.Headers.GetValues("Retry-After").Single());
        Assert.Equal("HeavyReads:MaxConcurrent", (await serviceFull.ProblemAsync()).GetProperty("limit").GetString());

        held1.Slot!.Dispose();
        held2.Slot!.Dispose();
        // Admitted again once the slots are free (404: the fleet has no such vehicle).
        Assert.Equal(HttpStatusCode.NotFound, (await otherRead.GetAsync(Window24h("any", nowUs))).StatusCode);
        Assert.Equal(0, gate.InFlight);
    }

    [Fact]
    public async Task Issue14_the_vehicle_views_five_reads_at_once_wait_for_their_turn_with_the_defaults()
    {
        // The dashboard's vehicle view asks for raw, filtered and smoothed tracks, diagnostics and distance at once: with
        // two reads per fleet they must queue, not be refused (a first version answered 429 and the view lost its path).
        var fleet = await fixture.NewFleetAsync();
        var drive = HistoryDrive.Create("van-view", seed: 6147);
        await drive.IngestAsync(fixture, fleet);
        using var read = fixture.Client(fleet.ReadKey);
        string window = "from=" + HistoryDrive.Time(drive.StartUs) + "&to=" + HistoryDrive.Time(drive.EndUs);
        string[] paths =
        [
            "/v1/vehicles/van-view/track?kind=raw&" + window, "/v1/vehicles/van-view/track?kind=filtered&" + window,
            "/v1/vehicles/van-view/track?kind=smoothed&" + window, "/v1/vehicles/van-view/diagnostics?" + window, "/v1/vehicles/van-view/distance?" + window,
        ];
        var answers = await Task.WhenAll(paths.Select(async path =>
        {
            using var response = await read.GetAsync(path);
            return ((int)response.StatusCode, path + ": " + await response.Content.ReadAsStringAsync());
        }));
        Assert.All(answers, a => Assert.True(a.Item1 == 200, a.Item2));
    }

    [Fact]
    public async Task Issue14_history_reads_have_a_pool_of_their_own_with_a_statement_timeout()
    {
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Database:ReadMaxPoolSize"] = "3",
            ["Database:ReadStatementTimeoutS"] = "1",
        });
        host.CreateClient().Dispose();
        var database = host.Services.GetRequiredService<FusionDatabase>();
        Assert.NotSame(database.DataSource, database.ReadDataSource);
        Assert.Equal(3, new NpgsqlConnectionStringBuilder(database.ReadDataSource.ConnectionString).MaxPoolSize);
        await using (var show = database.ReadDataSource.CreateCommand("SHOW statement_timeout"))
        {
            Assert.Equal("1s", (string?)await show.ExecuteScalarAsync());
        }

        // PostgreSQL cancels a read that runs past it (SQLSTATE 57014, query_canceled); the ingest pool has no such limit.
        await using (var slow = database.ReadDataSource.CreateCommand("SELECT pg_sleep(3)"))
        {
            var ex = await Assert.ThrowsAsync<PostgresException>(() => slow.ExecuteScalarAsync());
            Assert.Equal(PostgresErrorCodes.QueryCanceled, ex.SqlState);
        }

        await using (var show = database.DataSource.CreateCommand("SHOW statement_timeout"))
        {
            Assert.Equal("0", (string?)await show.ExecuteScalarAsync());
        }
    }

    [Fact]
    public async Task Issue14_five_concurrent_24h_smoothed_requests_do_not_make_ingest_refuse()
    {
        var fleet = await fixture.NewFleetAsync();
        var busy = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            // Few ingest connections, so that a history read taking them would show as 503s on ingest.
            ["Database:MaxPoolSize"] = "6",
            ["HeavyReads:MaxConcurrent"] = "3",
            ["HeavyReads:MaxConcurrentPerFleet"] = "2",
            ["HeavyReads:QueueTimeoutMs"] = "500",
        });
        var drive = HistoryDrive.Create("van-heavy", seed: 6141);
        await drive.IngestAsync(fixture, fleet, host: host);
        using var read = fixture.Client(fleet.ReadKey, host);
        long endUs = drive.EndUs + 60_000_000;

        using var ingest = fixture.Client(busy.IngestKey, host);
        using var stop = new CancellationTokenSource();
        var acknowledged = 0;
        var refusedIngest = new List<string>();
        var ingestLoop = Task.Run(async () =>
        {
            long t = TelemetryDrive.StartUs(TimeSpan.FromMinutes(30));
            while (!stop.IsCancellationRequested)
            {
                var body = new System.Text.StringBuilder("[");
                for (int i = 0; i < 50; i++, t += 100_000)
                {
                    body.Append(i == 0 ? string.Empty : ",").Append("{\"vehicle\":\"van-busy\",\"kind\":\"wheel\",\"time\":")
                        .Append((t / 1000).ToString(CultureInfo.InvariantCulture)).Append(",\"speed_mps\":4}");
                }

                using var response = await ingest.PostJsonAsync(body.Append(']').ToString());
                if (response.IsSuccessStatusCode)
                {
                    acknowledged++;
                }
                else
                {
                    refusedIngest.Add((int)response.StatusCode + " " + await response.Content.ReadAsStringAsync());
                }
            }
        });

        var answers = await Task.WhenAll(Enumerable.Range(0, 5).Select(async _ =>
        {
            using var response = await read.GetAsync(Window24h("van-heavy", endUs));
            string text = await response.Content.ReadAsStringAsync();
            bool retry = response.Headers.Contains("Retry-After");
            return ((int)response.StatusCode, retry, text);
        }));
        await stop.CancelAsync();
        await ingestLoop;

        Assert.Empty(refusedIngest);
        Assert.True(acknowledged > 0, "no ingest batch was acknowledged while the reads ran");
        foreach (var (status, retry, text) in answers)
        {
            Assert.True(status is 200 or 429 or 503, status + ": " + text);
            Assert.True(status == 200 || retry, "a refusal without Retry-After: " + text);
        }

        // Two reads of the fleet run at once at most; the first ones to arrive are served.
        Assert.InRange(answers.Count(a => a.Item1 == 200), 1, 5);
        var points = System.Text.Json.JsonDocument.Parse(answers.First(a => a.Item1 == 200).text).RootElement.GetProperty("points");
        Assert.True(points.GetArrayLength() > 100, "the smoothed track has " + points.GetArrayLength() + " points");
        Assert.Equal(0, host.Services.GetRequiredService<HeavyReadGate>().InFlight);
    }
}
