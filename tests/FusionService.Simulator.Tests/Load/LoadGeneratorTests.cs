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

        // The default shape is one vehicle per batch: 12 batches reach 12 of the 40 vehicles.
        Assert.All(server.Posts, p => Assert.Single(TelemetryJson.ReadNdjson(Encoding.UTF8.GetString(p.Body)).Select(m => m.Vehicle).Distinct()));
        Assert.Equal(12, server.Posts.SelectMany(p => TelemetryJson.ReadNdjson(Encoding.UTF8.GetString(p.Body))).Select(m => m.Vehicle).Distinct().Count());
    }

    [Fact]
    public void Per_vehicle_batches_continue_each_vehicle_in_time_order_from_round_to_round()
    {
        var options = new LoadGeneratorOptions { Endpoint = new Uri("http://127.0.0.1:1/v1/telemetry"), VehicleCount = 4, BatchSize = 50 };
        var byVehicle = Enumerable.Range(0, 12)
            .SelectMany(b => LoadGenerator.SyntheticBatch(options, b))
            .GroupBy(m => m.Vehicle)
            .ToDictionary(g => g.Key, g => g.Select(m => m.TimeUs).ToList());

        Assert.Equal(4, byVehicle.Count);
        foreach (var times in byVehicle.Values)
        {
            // Three rounds of 50 steps each, 100 ms apart, with no gap or overlap between rounds.
            Assert.Equal(150, times.Count);
            Assert.All(times.Zip(times.Skip(1)), pair => Assert.Equal(100_000L, pair.Second - pair.First));
        }
    }

    [Fact]
    public void Interleaved_batches_spread_each_batch_over_many_vehicles()
    {
        var options = new LoadGeneratorOptions
        {
            Endpoint = new Uri("http://127.0.0.1:1/v1/telemetry"), VehicleCount = 40, BatchSize = 500, Shape = LoadShape.Interleaved,
        };
        var batch = LoadGenerator.SyntheticBatch(options, 0);

        Assert.Equal(40, batch.Select(m => m.Vehicle).Distinct().Count());
        Assert.Equal(13, batch.Count(m => m.Vehicle == batch[0].Vehicle));
    }

    [Fact]
    public void Interleaved_runs_keep_a_vehicles_messages_together_and_its_steps_contiguous()
    {
        var options = new LoadGeneratorOptions
        {
            Endpoint = new Uri("http://127.0.0.1:1/v1/telemetry"), VehicleCount = 40, BatchSize = 200, Shape = LoadShape.Interleaved, VehicleRun = 10,
        };
        var batches = Enumerable.Range(0, 6).Select(b => LoadGenerator.SyntheticBatch(options, b)).ToList();

        // A batch of 200 in runs of 10 covers 20 vehicles, 10 messages each, in a row.
        Assert.All(batches, batch => Assert.Equal(20, batch.Select(m => m.Vehicle).Distinct().Count()));
        Assert.All(batches[0].Chunk(10), run => Assert.Single(run.Select(m => m.Vehicle).Distinct()));

        // Every vehicle's steps over the six batches (three runs each) follow one another 100 ms apart.
        var byVehicle = batches.SelectMany(b => b).GroupBy(m => m.Vehicle).ToDictionary(g => g.Key, g => g.Select(m => m.TimeUs).ToList());
        Assert.Equal(40, byVehicle.Count);
        Assert.All(byVehicle.Values, times =>
        {
            Assert.Equal(30, times.Count);
            Assert.All(times.Zip(times.Skip(1)), pair => Assert.Equal(100_000L, pair.Second - pair.First));
        });
    }

    [Fact]
    public void A_rate_that_is_not_positive_is_refused()
    {
        var options = new LoadGeneratorOptions { Endpoint = new Uri("http://127.0.0.1:1/v1/telemetry"), MessagesPerSecond = 0 };
        var error = Assert.Throws<ArgumentException>(options.Validate);
        Assert.Contains("MessagesPerSecond", error.Message, StringComparison.Ordinal);
    }
}
