// A clean stop writes every verdict the tracks queued, however the background writer's loop ends.
using FusionService.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class CleanStopTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue13_a_stop_while_a_verdict_write_waits_on_the_store_still_writes_every_verdict()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-stop", TelemetryDrive.StartUs(TimeSpan.FromMinutes(6)), seed: 131);
        const int Messages = 300;

        var host = new ServiceFactory(fixture.ConnectionString);
        using (var client = fixture.Client(fleet.IngestKey, host))
        {
            // Activate the track first, before the verdict writes are held below.
            await client.IngestOkAsync(drive.Body(0, 100));
            await host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);

            // Hold the verdict writes so that the writer's next flush waits inside its update when the stop comes.
            await using var hold = await VerdictWriteHold.StartAsync(fixture.Store, fleet.Id);
            for (int from = 100; from < Messages; from += 100)
            {
                await client.IngestOkAsync(drive.Body(from, from + 100));
            }

            // The acknowledgement waited for the track, so its verdicts are queued; let a flush start and block.
            await Task.Delay(500);
            var stop = host.DisposeAsync().AsTask();
            await Task.Delay(1500);
            Assert.False(stop.IsCompleted, "the stop must wait for the verdicts it has to write");
            await hold.DisposeAsync();
            await stop;
        }

        Assert.Equal(drive.Messages.Take(Messages).Sum(m => m.Core.Length), await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id));
    }
}
