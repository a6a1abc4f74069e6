// A crash (the process killed, no clean stop) mid-stream: nothing acknowledged is lost and the rebuilt track equals
// an uninterrupted run's.
using FusionService.Tests.Infrastructure;
using Xunit.Abstractions;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class CrashRestartTests(ServiceFixture fixture, ITestOutputHelper output)
{
    [Fact]
    public async Task Killed_service_loses_no_acknowledged_message_and_rebuilds_the_uninterrupted_track()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-crash";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(9)), seed: 73);
        const int KillAfter = 1200;
        int acknowledged = 0;

        // The service as a real process, acknowledging after the commit (the default), killed with SIGKILL while
        // its tracks may still hold unwritten outcomes, fused states and checkpoints.
        using (var service = ServiceProcess.Start(fixture.ConnectionString, output: null))
        {
            await service.WaitUntilReadyAsync();
            using var client = service.Client(fleet.IngestKey);
            for (int from = 0; from < KillAfter; from += 100)
            {
                acknowledged += (await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, KillAfter)))).Accepted;
            }

            await service.KillAsync();
        }

        Assert.Equal(KillAfter, acknowledged);
        long pending = await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id);
        output.WriteLine($"after the kill: {pending} stored measurements still pending (their verdicts were not written)");

        await using (var second = new ServiceFactory(fixture.ConnectionString))
        {
            using var client = fixture.Client(fleet.IngestKey, second);
            for (int from = KillAfter; from < drive.Messages.Count; from += 100)
            {
                acknowledged += (await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, drive.Messages.Count)))).Accepted;
            }

            Assert.Equal(drive.Messages.Count, acknowledged);
            Assert.Equal(drive.Messages.Sum(m => m.Core.Length), await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
            var uninterrupted = new TrackOracle();
            uninterrupted.Process(drive.Messages.Select(m => m.Core));
            Assert.Equal(uninterrupted.Response(Vehicle), await fixture.Client(fleet.ReadKey, second).StateAsync(Vehicle));

            // The verdicts lost with the process are written again by the rebuilt track.
            await second.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);
            Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id));
        }
    }
}
