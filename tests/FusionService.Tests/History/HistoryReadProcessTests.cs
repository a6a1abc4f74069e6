// Issue 14: a history-read process (Service:Role=HistoryReads) answers the reads from the store the others write.
using System.Net;
using System.Text;
using FusionService.Tests.Infrastructure;
using Xunit.Abstractions;

namespace FusionService.Tests.History;

[Collection(ServiceTests.Name)]
public sealed class HistoryReadProcessTests(ServiceFixture fixture, ITestOutputHelper output)
{
    /// <summary>
    /// A round ingested through the shared host; a separate process with <c>Service:Role=HistoryReads</c> on the same
    /// PostgreSQL answers its smoothed and filtered tracks, distance and diagnostics exactly as the ingesting host does
    /// (the reference is the ingesting host's own answer: both replay the same stored rows), and takes no telemetry:
    /// ingest, the fleet view and alerts are not served there (404) and nothing it was sent is stored.
    /// </summary>
    [Fact]
    public async Task Issue14_history_read_process_answers_like_the_ingesting_one_and_takes_no_telemetry()
    {
        const string vehicle = "van-hrp";
        var fleet = await fixture.NewFleetAsync();
        var drive = HistoryDrive.Create(vehicle, seed: 6300);
        await drive.IngestAsync(fixture, fleet);
        long stored = await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id);

        using var reads = ServiceProcess.Start(fixture.ConnectionString, output, new Dictionary<string, string> { ["Service__Role"] = "HistoryReads" });
        await reads.WaitUntilReadyAsync();
        using var there = reads.Client(fleet.ReadKey);
        using var here = fixture.Client(fleet.ReadKey);
        long from = drive.StartUs, to = drive.EndUs + 1_000_000;
        foreach (string kind in new[] { "smoothed", "filtered" })
        {
            var expected = (await HistoryDrive.TrackJsonAsync(here, vehicle, from, to, kind)).GetProperty("points");
            var actual = (await HistoryDrive.TrackJsonAsync(there, vehicle, from, to, kind)).GetProperty("points");
            Assert.True(expected.GetArrayLength() > 100, $"{kind}: {expected.GetArrayLength()} points");
            Assert.Equal(expected.GetRawText(), actual.GetRawText());
        }

        var distanceHere = await HistoryDrive.DistanceAsync(here, vehicle, from, to);
        var distanceThere = await HistoryDrive.DistanceAsync(there, vehicle, from, to);
        Assert.Equal(distanceHere.GetRawText(), distanceThere.GetRawText());
        string diagnostics = $"/v1/vehicles/{vehicle}/diagnostics?from={HistoryDrive.Time(from)}&to={HistoryDrive.Time(to)}";
        using (var a = await here.GetAsync(diagnostics))
        using (var b = await there.GetAsync(diagnostics))
        {
            Assert.Equal(HttpStatusCode.OK, b.StatusCode);
            Assert.Equal(await a.Content.ReadAsStringAsync(), await b.Content.ReadAsStringAsync());
        }

        using var ingest = reads.Client(fleet.IngestKey);
        string message = $"[{{\"vehicle\":\"{vehicle}\",\"kind\":\"wheel\",\"time\":{(drive.EndUs / 1000) + 500},\"speed_mps\":1}}]";
        using (var posted = await ingest.PostAsync("/v1/telemetry", new StringContent(message, Encoding.UTF8, "application/json")))
        {
            Assert.Equal(HttpStatusCode.NotFound, posted.StatusCode);
        }

        foreach (string path in new[] { "/v1/vehicles", "/v1/alerts", $"/v1/vehicles/{vehicle}" })
        {
            using var response = await there.GetAsync(path);
            Assert.Equal(HttpStatusCode.NotFound, response.StatusCode);
        }

        Assert.Equal(stored, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
        await reads.StopAsync();
    }

    /// <summary>
    /// Without a connection string and with no server running on its data directory, a history-read process does not
    /// start a private, empty store (its answers would be silently empty): it exits with a message that says why.
    /// </summary>
    [Fact]
    public async Task Issue14_history_read_process_without_a_running_store_refuses_to_start()
    {
        string empty = Directory.CreateTempSubdirectory("fusion-no-store-").FullName;
        try
        {
            using var reads = ServiceProcess.Start(string.Empty, output, new Dictionary<string, string>
            {
                ["Service__Role"] = "HistoryReads",
                ["Database__DataDirectory"] = empty,
            });
            using var bound = new CancellationTokenSource(TimeSpan.FromSeconds(60));
            await reads.Process.WaitForExitAsync(bound.Token);
            Assert.NotEqual(0, reads.Process.ExitCode);
            Assert.Contains(reads.Lines, line => line.Contains("history-read process (Service:Role=HistoryReads)", StringComparison.Ordinal));
            Assert.Empty(Directory.EnumerateFileSystemEntries(empty));
        }
        finally
        {
            Directory.Delete(empty, recursive: true);
        }
    }
}
