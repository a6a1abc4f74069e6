// A committed batch that never reached its track (a grain call that timed out) is recovered from the store.
using FusionService.Ingest;
using FusionService.Storage.Measurements;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using Microsoft.Extensions.DependencyInjection;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class MissedDeliveryTests(ServiceFixture fixture)
{
    [Fact]
    public async Task A_track_told_to_rebuild_takes_the_stored_measurements_it_missed_and_ends_as_an_uninterrupted_track()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-missed";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(16)), seed: 74);
        // A chunk early in the drive goes missing; the track checkpoints near the end of it, well past the chunk (the
        // base checkpoint trails the newest data by the 60 s replay window).
        int missedFrom = 100, missedTo = 150, checkpointAfter = (drive.Messages.Count - 50) / 50 * 50;
        await using var host = new ServiceFactory(fixture.ConnectionString);
        using var client = fixture.Client(fleet.IngestKey, host);
        var grain = host.Services.GetRequiredService<IGrainFactory>().GetGrain<IVehicleTrackGrain>(GrainKeys.Of(fleet.Id, Vehicle));

        // Those messages are committed straight into the store, as if their delivery to the track had been lost;
        // the track goes on with the messages after them and checkpoints past them.
        for (int from = 0; from < checkpointAfter; from += 50)
        {
            if (from == missedFrom)
            {
                await StoreWithoutTrackAsync(fleet.Id, Vehicle, drive.Messages.Skip(missedFrom).Take(missedTo - missedFrom).SelectMany(m => m.Core));
                continue;
            }

            await client.IngestOkAsync(drive.Body(from, from + 50));
        }

        await grain.PersistCheckpointAsync();
        long missedFromUs = drive.Messages[missedFrom].Core.Min(m => m.TimeUs);
        const string CheckpointsFrom = "SELECT count(*) FROM filter_checkpoints WHERE fleet_id = $1 AND time_us >= $2";
        Assert.True(await fixture.CountAsync(CheckpointsFrom, fleet.Id, missedFromUs) > 0, "the track checkpointed past the missed messages");
        var missing = new TrackOracle();
        missing.Process(drive.Messages.Take(checkpointAfter).Where((_, i) => i < missedFrom || i >= missedTo).Select(m => m.Core));
        Assert.Equal(missing.Response(Vehicle), await fixture.Client(fleet.ReadKey, host).StateAsync(Vehicle));

        await grain.RebuildAsync(missedFromUs);
        Assert.Equal(0, await fixture.CountAsync(CheckpointsFrom, fleet.Id, missedFromUs));
        for (int from = checkpointAfter; from < drive.Messages.Count; from += 50)
        {
            await client.IngestOkAsync(drive.Body(from, Math.Min(from + 50, drive.Messages.Count)));
        }

        var uninterrupted = new TrackOracle();
        uninterrupted.Process(drive.Messages.Select(m => m.Core));
        Assert.Equal(uninterrupted.Response(Vehicle), await fixture.Client(fleet.ReadKey, host).StateAsync(Vehicle));
    }

    private Task StoreWithoutTrackAsync(Guid fleetId, string vehicle, IEnumerable<FusionService.Estimation.Measurements.Measurement> measurements) =>
        fixture.StoreWithoutTrackAsync([.. measurements.Select(m => MeasurementRows.ToRow(fleetId, vehicle, m, DateTime.UtcNow))]);
}
