// The default acknowledgement point: after the durable commit, with the tracks processing in the background.
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class AcknowledgeAfterCommitTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Acknowledged_batches_are_committed_and_the_track_catches_up_to_the_core_run()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-ack", TelemetryDrive.StartUs(TimeSpan.FromMinutes(7)), seed: 33);
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Ingest:AcknowledgeAfter"] = "Commit" });
        using var ingest = fixture.Client(fleet.IngestKey, host);
        int accepted = 0;
        for (int from = 0; from < drive.Messages.Count; from += 250)
        {
            var response = await ingest.IngestOkAsync(drive.Body(from, Math.Min(from + 250, drive.Messages.Count)));
            accepted += response.Accepted;

            // The contract: every message reported accepted is already committed when the answer arrives.
            Assert.Equal(
                drive.Messages.Take(from + response.Accepted).Sum(m => m.Core.Length),
                await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
        }

        Assert.Equal(drive.Messages.Count, accepted);
        await host.Services.GetRequiredService<TrackDispatcher>().WhenIdleAsync();
        var oracle = new TrackOracle();
        oracle.Process(drive.Messages.Select(m => m.Core));
        Assert.Equal(oracle.Response("van-ack"), await fixture.Client(fleet.ReadKey, host).StateAsync("van-ack"));
    }

    [Fact]
    public async Task Batches_posted_back_to_back_reach_the_track_in_order_and_none_is_judged_too_late()
    {
        // A tracker flushing a backlog: 500-message batches (about 23 s of data each), each posted as soon as the previous
        // one is answered. The track activates while later batches are already committed, so its restore holds them; their
        // deliveries, arriving afterwards and more than the 60 s replay window behind, must not be judged again (as too
        // late, overwriting the verdicts of the restore). Nor may the batches reach the track out of order.
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-backlog";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(8)), seed: 35);
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Ingest:AcknowledgeAfter"] = "Commit" });
        using var ingest = fixture.Client(fleet.IngestKey, host);
        for (int from = 0; from < drive.Messages.Count; from += ServiceFactory.MaxMessages)
        {
            await ingest.IngestOkAsync(drive.Body(from, Math.Min(from + ServiceFactory.MaxMessages, drive.Messages.Count)));
        }

        await host.Services.GetRequiredService<TrackDispatcher>().WhenIdleAsync();
        await host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 2", fleet.Id));
        var oracle = new TrackOracle();
        oracle.Process(drive.Messages.Select(m => m.Core));
        Assert.Equal(oracle.Response(Vehicle), await fixture.Client(fleet.ReadKey, host).StateAsync(Vehicle));
    }
}
