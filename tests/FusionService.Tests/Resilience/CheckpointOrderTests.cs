// A checkpoint is stored only after the verdicts and fused states it covers: after a crash the restore skips every
// measurement up to the checkpoint, so a verdict lost with the process would otherwise stay pending for good.
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using Microsoft.Extensions.DependencyInjection;
using Npgsql;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class CheckpointOrderTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue13_no_checkpoint_is_stored_while_the_verdicts_it_covers_are_unwritten()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-order", TelemetryDrive.StartUs(TimeSpan.FromMinutes(9)), seed: 133);
        int blocked = (drive.Messages.Count - 300) / 100 * 100;
        const string Checkpoints = "SELECT coalesce(max(time_us), 0) FROM filter_checkpoints WHERE fleet_id = $1";
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Tracks:CheckpointIntervalS"] = "0" });
        using var client = fixture.Client(fleet.IngestKey, host);
        await client.IngestOkAsync(drive.Body(0, 100));
        await host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);

        long before;
        await using (var hold = await VerdictWriteHold.StartAsync(fixture.Store, fleet.Id))
        {
            before = await fixture.CountAsync(Checkpoints, fleet.Id);

            // Well past the 60 s replay window, so that the base checkpoint moves on and one is due after every batch.
            for (int from = 100; from < blocked; from += 100)
            {
                await client.IngestOkAsync(drive.Body(from, from + 100));
            }

            Assert.Equal(before, await fixture.CountAsync(Checkpoints, fleet.Id));
        }

        for (int from = blocked; from < drive.Messages.Count; from += 100)
        {
            await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, drive.Messages.Count)));
            await host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        }

        Assert.True(await fixture.CountAsync(Checkpoints, fleet.Id) > before, "a newer checkpoint is stored once its verdicts are");
        Assert.Equal(0, await fixture.CountAsync(
            "SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4 AND time_us <= (SELECT max(time_us) FROM filter_checkpoints c WHERE c.fleet_id = $1)",
            fleet.Id));
    }
}
