// The track keeps a filter checkpoint per spacing of data time, written as the data go by, or only its newest.
using System.Globalization;
using FusionService.Tests.History;
using FusionService.Tests.Infrastructure;
using Npgsql;
using Xunit.Abstractions;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class HistoryCheckpointTests(ServiceFixture fixture, ITestOutputHelper output)
{
    [Fact]
    public async Task A_round_posted_at_once_leaves_a_checkpoint_per_minute_of_data()
    {
        var times = await CheckpointTimesAsync("1", "van-history-1m", seed: 6600);
        output.WriteLine("checkpoints at " + string.Join(", ", times.Select(t => ((t - times[0]) / 1e6).ToString("F1", CultureInfo.InvariantCulture))) + " s");

        // The round lasts several minutes but is posted within seconds, so the wall-clock checkpoints alone would leave
        // one or two; the data-time spacing leaves one per minute (the newest may follow its predecessor sooner).
        Assert.True(times.Count >= 4, $"only {times.Count} checkpoints");
        for (int i = 1; i < times.Count - 1; i++)
        {
            Assert.True(times[i] - times[i - 1] >= 60_000_000, $"checkpoints {i - 1} and {i} only {(times[i] - times[i - 1]) / 1e6} s apart");
        }
    }

    [Fact]
    public async Task A_round_posted_while_the_verdict_writes_stall_still_leaves_a_checkpoint_per_minute_of_data()
    {
        // Checkpoints wait for the verdicts they cover; while those are held, the ones due meanwhile must queue up
        // rather than be skipped, or a smoothed read of the round would replay it in fewer stretches.
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-history-held";
        var drive = HistoryDrive.Create(Vehicle, seed: 6600);
        await using (var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Tracks:HistoryCheckpointSpacingMin"] = "1" }))
        {
            using var client = fixture.Client(fleet.IngestKey, host);
            var messages = drive.Drive.Messages;
            await using (await VerdictWriteHold.StartAsync(fixture.Store, fleet.Id))
            {
                for (int from = 0; from < messages.Count; from += 100)
                {
                    await client.IngestOkAsync(drive.Drive.Body(from, Math.Min(from + 100, messages.Count)));
                }

                Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM filter_checkpoints WHERE fleet_id = $1", fleet.Id));
            }
        }

        var times = await CheckpointTimesAsync(fleet, Vehicle);
        output.WriteLine("checkpoints at " + string.Join(", ", times.Select(t => ((t - times[0]) / 1e6).ToString("F1", CultureInfo.InvariantCulture))) + " s");
        Assert.True(times.Count >= 4, $"only {times.Count} checkpoints");
        for (int i = 1; i < times.Count - 1; i++)
        {
            Assert.True(times[i] - times[i - 1] >= 60_000_000, $"checkpoints {i - 1} and {i} only {(times[i] - times[i - 1]) / 1e6} s apart");
        }
    }

    [Fact]
    public async Task A_spacing_of_zero_keeps_only_the_newest_checkpoint()
    {
        var times = await CheckpointTimesAsync("0", "van-history-none", seed: 6700);
        Assert.Single(times);
    }

    /// <summary>Posts a round to a host with the given spacing, stops it (the last checkpoint is written) and lists the checkpoints.</summary>
    private async Task<List<long>> CheckpointTimesAsync(string spacingMin, string vehicle, int seed)
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = HistoryDrive.Create(vehicle, seed);
        await using (var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Tracks:HistoryCheckpointSpacingMin"] = spacingMin }))
        {
            await drive.IngestAsync(fixture, fleet, host: host);
        }

        return await CheckpointTimesAsync(fleet, vehicle);
    }

    private async Task<List<long>> CheckpointTimesAsync(TestFleet fleet, string vehicle)
    {
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new NpgsqlCommand(
            "SELECT time_us FROM filter_checkpoints WHERE fleet_id = $1 AND vehicle_id = $2 ORDER BY time_us", connection);
        command.Parameters.Add(new NpgsqlParameter { Value = fleet.Id });
        command.Parameters.Add(new NpgsqlParameter { Value = vehicle });
        var times = new List<long>();
        await using var reader = await command.ExecuteReaderAsync();
        while (await reader.ReadAsync())
        {
            times.Add(reader.GetInt64(0));
        }

        return times;
    }
}
