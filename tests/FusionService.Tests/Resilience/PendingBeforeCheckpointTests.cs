// Stored rows that never reached a track and lie before its checkpoint are fused in order when the track activates.
using FusionService.Estimation.Measurements;
using FusionService.Ingest;
using FusionService.Storage.Measurements;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using Microsoft.Extensions.DependencyInjection;

namespace FusionService.Tests.Resilience;

/// <summary>
/// Issue 13: a process killed between a commit and the track's verdicts leaves stored rows pending. Those after the
/// newest checkpoint are re-processed by the next activation; for those at or before it, the activation restores from
/// an earlier checkpoint (here: none, the drive's start) so that they are fused in order, as acknowledged, instead of
/// staying pending for good or being judged too late.
/// </summary>
[Collection(ServiceTests.Name)]
public sealed class PendingBeforeCheckpointTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue13_pending_rows_before_the_checkpoint_are_fused_in_order_at_activation()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-pending-old";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(11)), seed: 134);
        const int StopAfter = 1700;
        await using (var first = new ServiceFactory(fixture.ConnectionString))
        {
            using var client = fixture.Client(fleet.IngestKey, first);
            for (int from = 0; from < StopAfter; from += 100)
            {
                await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, StopAfter)));
            }
        }

        // Committed by a process that died before handing them to the track: three wheel samples from the drive's
        // first seconds, long before the checkpoint the stop stored.
        long firstUs = drive.Messages[0].Core[0].TimeUs;
        var lost = Enumerable.Range(0, 3)
            .Select(i => Measurement.WheelSpeed(firstUs + 250_000 + (i * 1_000_000L), MessageKeys.FromId("lost-" + i.ToString(System.Globalization.CultureInfo.InvariantCulture)), 6.5))
            .ToList();
        await fixture.StoreWithoutTrackAsync([.. lost.Select(m => MeasurementRows.ToRow(fleet.Id, Vehicle, m, DateTime.UtcNow))]);
        Assert.Equal(3, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id));
        Assert.True(await fixture.CountAsync("SELECT coalesce(max(time_us), 0) FROM filter_checkpoints WHERE fleet_id = $1", fleet.Id) > lost[^1].TimeUs);

        await using var second = new ServiceFactory(fixture.ConnectionString);
        using var ingest = fixture.Client(fleet.IngestKey, second);
        for (int from = StopAfter; from < drive.Messages.Count; from += 100)
        {
            await ingest.IngestOkAsync(drive.Body(from, Math.Min(from + 100, drive.Messages.Count)));
        }

        await second.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id));
        foreach (var m in lost)
        {
            long outcome = await fixture.CountAsync(
                "SELECT outcome FROM " + JudgedSql.OfFleet + " WHERE kind = $2 AND message_key = $3", fleet.Id, (short)m.Kind, (long)m.MessageKey);
            Assert.NotEqual(3, outcome); // too_late
            Assert.NotEqual(4, outcome); // pending
        }

        // As an uninterrupted track handed every message in time order: the lost samples fused where they belong.
        var uninterrupted = new TrackOracle();
        uninterrupted.Process(drive.Messages.Select(m => m.Core).Append([.. lost]).OrderBy(core => core.Min(m => m.TimeUs)));
        Assert.Equal(uninterrupted.Response(Vehicle), await fixture.Client(fleet.ReadKey, second).StateAsync(Vehicle));
    }
}
