// The service folds the small chunks of the windows its commits wrote once no commit wrote into them for a while.
using FusionService.Database;
using FusionService.Estimation.Measurements;
using FusionService.Ingest;
using FusionService.Storage.Measurements;
using FusionService.Tests.Infrastructure;
using Microsoft.Extensions.Options;

namespace FusionService.Tests.Database;

[Collection(ServiceTests.Name)]
public sealed class ChunkFoldServiceTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue16_a_gateways_windows_fold_into_one_chunk_per_van_once_left_alone_and_windows_still_written_wait()
    {
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Ingest:CommitWriters"] = "1",
            ["Database:ChunkFoldDelayS"] = "2",
            ["Database:ChunkFoldIntervalS"] = "3600",
        });
        using var client = fixture.Client(fleet.ReadKey, host);
        var writer = host.Services.GetRequiredService<GroupCommitWriter>();
        // Six gateway commits, each one wheel speed of each of three vans, into a window 30 minutes ago; after more than
        // the 2 s wait, six more into the window of a minute ago.
        long earlierUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(30));
        long laterUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(1));
        string[] vans = ["fold-van-1", "fold-van-2", "fold-van-3"];
        foreach (long startUs in new[] { earlierUs, laterUs })
        {
            if (startUs == laterUs)
            {
                await Task.Delay(TimeSpan.FromSeconds(2.5));
            }

            for (int k = 0; k < 6; k++)
            {
                var rows = vans.Select(van => MeasurementRows.ToRow(
                    fleet.Id, van, Measurement.WheelSpeed(startUs + (k * 100_000), (ulong)(k + 1), 4.0 + k), DateTime.UtcNow)).ToList();
                Assert.Equal(rows.Count, (await writer.CommitAsync(rows)).Inserted.Count);
            }
        }

        Task<long> ChunksAsync(long timeUs) => fixture.CountAsync(
            "SELECT count(*) FROM measurement_chunks WHERE fleet_id = $1 AND first_us / 600000000 = " + MeasurementChunks.WindowOf(timeUs),
            fleet.Id);
        Assert.Equal(18, await ChunksAsync(earlierUs));

        await host.Services.GetRequiredService<ChunkFoldService>().FoldQuietAsync(CancellationToken.None);

        Assert.Equal(3, await ChunksAsync(earlierUs));
        Assert.Equal(18, await ChunksAsync(laterUs));
        Assert.Equal(36L, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
        // The windows just written wait in the queue for their turn.
        Assert.Equal(3, host.Services.GetRequiredService<ChunkFoldQueue>().Count);
        string metrics = await fixture.Client(fleet.AdminKey, host).GetStringAsync("/metrics");
        // At least this fold's chunks: the meter is the process's, and other tests' hosts may fold beside this one.
        Assert.True(FusionService.LoadTools.PrometheusText.Value(metrics, "fusion_store_folded_chunks_total") >= 18);
    }

    [Fact]
    public async Task Issue16_a_graceful_stop_folds_the_windows_still_waiting()
    {
        // The queue is in memory: without the fold at the stop, a gateway's windows of the last 15 minutes before a
        // restart would keep their small chunks for as long as their day is kept.
        var fleet = await fixture.NewFleetAsync();
        // The middle of the ten-minute window that began 15-25 minutes ago: the five samples (0.4 s) stay in it.
        long startUs = (MeasurementChunks.WindowOf(TelemetryDrive.StartUs(TimeSpan.FromMinutes(15))) * 600_000_000) + 300_000_000;
        string[] vans = ["stop-fold-van-1", "stop-fold-van-2"];
        await using (var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Ingest:CommitWriters"] = "1",
            ["Database:ChunkFoldDelayS"] = "900",
        }))
        {
            var writer = host.Services.GetRequiredService<GroupCommitWriter>();
            for (int k = 0; k < 5; k++)
            {
                var rows = vans.Select(van => MeasurementRows.ToRow(
                    fleet.Id, van, Measurement.WheelSpeed(startUs + (k * 100_000), (ulong)(k + 1), 4.0 + k), DateTime.UtcNow)).ToList();
                Assert.Equal(rows.Count, (await writer.CommitAsync(rows)).Inserted.Count);
            }

            Assert.Equal(10L, await fixture.CountAsync("SELECT count(*) FROM measurement_chunks WHERE fleet_id = $1", fleet.Id));
        }

        Assert.Equal(2L, await fixture.CountAsync("SELECT count(*) FROM measurement_chunks WHERE fleet_id = $1", fleet.Id));
        Assert.Equal(10L, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public void With_folding_off_no_window_is_kept_in_memory()
    {
        // Database:ChunkFoldDelayS = 0 turns folding off; a queue that still noted every written window would grow by one
        // entry per vehicle and ten minutes for as long as the process runs.
        var key = new MeasurementKey(Guid.NewGuid(), "fold-off-van", 1, 1_764_000_000_000_000, 1);
        var off = new ChunkFoldQueue(TimeProvider.System, Options.Create(new DatabaseOptions { ChunkFoldDelayS = 0 }));
        var on = new ChunkFoldQueue(TimeProvider.System, Options.Create(new DatabaseOptions { ChunkFoldDelayS = 900 }));
        off.Note([key]);
        on.Note([key]);
        Assert.Equal(0, off.Count);
        Assert.Equal(1, on.Count);
    }
}
