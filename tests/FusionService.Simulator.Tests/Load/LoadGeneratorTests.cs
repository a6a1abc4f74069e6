using System.Text;
using FusionService.Simulator.Load;
using FusionService.Simulator.Messages;
using FusionService.Simulator.Tests.Feeding;

namespace FusionService.Simulator.Tests.Load;

/// <summary>The load generator against the in-test server, and its percentile rule.</summary>
public sealed class LoadGeneratorTests
{
    // Nearest-rank method, worked example of the "Percentile" article of the English Wikipedia (from memory):
    // for 15, 20, 35, 40, 50 the 30th percentile is 20, the 40th 20, the 50th 35 and the 100th 50.
    [Theory]
    [InlineData(30.0, 20.0)]
    [InlineData(40.0, 20.0)]
    [InlineData(50.0, 35.0)]
    [InlineData(100.0, 50.0)]
    public void Nearest_rank_percentile_matches_the_worked_example(double percent, double expected) =>
        Assert.Equal(expected, LoadGenerator.NearestRankPercentile([15.0, 20.0, 35.0, 40.0, 50.0], percent));

    [Fact]
    public async Task Posts_batches_of_500_unique_messages_and_reports_throughput_and_latency()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync();
        using var http = new HttpClient();
        var options = new LoadGeneratorOptions
        {
            Endpoint = new Uri(server.BaseUrl, "v1/telemetry"),
            ApiKey = "load-key",
            VehicleCount = 40,
            TotalBatches = 12,
            Concurrency = 3,
        };
        LoadReport report = await new LoadGenerator(http, options).RunAsync();

        Assert.Equal((12L, 6000L, 0L), (report.BatchesAccepted, report.MessagesAccepted, report.BatchesRejected));
        Assert.True(report.AcceptedPerSecond > 0 && report.P50AckMs > 0 && report.P50AckMs <= report.P99AckMs, report.ToSummaryLine());
        Assert.Equal(12, server.Posts.Count);
        var ids = new HashSet<string>(StringComparer.Ordinal);
        foreach (TestIngestServer.Post post in server.Posts)
        {
            Assert.Equal("Bearer load-key", post.Authorization);
            IReadOnlyList<TelemetryMessage> messages = TelemetryJson.ReadNdjson(Encoding.UTF8.GetString(post.Body));
            Assert.Equal(500, messages.Count);
            Assert.All(messages, m => Assert.True(ids.Add(m.Id), $"id {m.Id} sent twice"));
        }

        Assert.Equal(40, server.Posts.SelectMany(p => TelemetryJson.ReadNdjson(Encoding.UTF8.GetString(p.Body))).Select(m => m.Vehicle).Distinct().Count());
    }
}
