// A restart mid-stream: every acknowledged message is stored and the rebuilt state equals an uninterrupted run's.
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class RestartTests(ServiceFixture fixture)
{
    [Theory]
    [InlineData(150)]
    [InlineData(1700)]
    public async Task Rebuilt_track_equals_the_uninterrupted_one(int stopAfter)
    {
        var fleet = await fixture.NewFleetAsync();
        string vehicle = "van-restart-" + stopAfter.ToString(System.Globalization.CultureInfo.InvariantCulture);
        var drive = TelemetryDrive.Create(vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(9)), seed: 71);
        int acknowledged = 0;
        await using (var first = new ServiceFactory(fixture.ConnectionString))
        {
            using var client = fixture.Client(fleet.IngestKey, first);
            for (int from = 0; from < stopAfter; from += 50)
            {
                acknowledged += (await client.IngestOkAsync(drive.Body(from, Math.Min(from + 50, stopAfter)))).Accepted;
            }
        }

        Assert.True(await fixture.CountAsync("SELECT count(*) FROM filter_checkpoints WHERE fleet_id = $1", fleet.Id) >= (stopAfter > 1500 ? 1 : 0));
        await using (var second = new ServiceFactory(fixture.ConnectionString))
        {
            using var client = fixture.Client(fleet.IngestKey, second);
            for (int from = stopAfter; from < drive.Messages.Count; from += 50)
            {
                acknowledged += (await client.IngestOkAsync(drive.Body(from, Math.Min(from + 50, drive.Messages.Count)))).Accepted;
            }

            Assert.Equal(drive.Messages.Count, acknowledged);
            Assert.Equal(drive.Messages.Sum(m => m.Core.Length), await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
            var uninterrupted = new TrackOracle();
            uninterrupted.Process(drive.Messages.Select(m => m.Core));
            var rebuilt = await fixture.Client(fleet.ReadKey, second).StateAsync(vehicle);
            var expected = uninterrupted.Response(vehicle);
            Assert.Equal(expected, rebuilt);
        }
    }

    [Fact]
    public async Task A_message_stored_as_too_late_is_skipped_when_the_track_is_rebuilt()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-late", TelemetryDrive.StartUs(TimeSpan.FromMinutes(12)), seed: 72);
        const int StopAfter = 1700;
        long firstUs = drive.Messages[0].Core[0].TimeUs;
        // A wheel message from the first second arrives after more than the 60 s replay window of data.
        string lateId = "late-wheel";
        string late = "[{\"vehicle\":\"van-late\",\"kind\":\"wheel\",\"time\":" + ((firstUs / 1000) + 500).ToString(System.Globalization.CultureInfo.InvariantCulture)
            + ",\"id\":\"" + lateId + "\",\"speed_mps\":7.5}]";
        var lateCore = FusionService.Estimation.Measurements.Measurement.WheelSpeed(firstUs + 500_000, FusionService.Ingest.MessageKeys.FromId(lateId), 7.5);
        await using (var first = new ServiceFactory(fixture.ConnectionString))
        {
            using var client = fixture.Client(fleet.IngestKey, first);
            for (int from = 0; from < StopAfter; from += 100)
            {
                await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, StopAfter)));
            }

            Assert.Equal(1, (await client.IngestOkAsync(late)).Accepted);
        }

        Assert.Equal(2, await fixture.CountAsync(
            "SELECT outcome FROM " + JudgedSql.OfFleet + " WHERE message_key = $2", fleet.Id, (long)lateCore.MessageKey));
        await using var second = new ServiceFactory(fixture.ConnectionString);
        using var ingest = fixture.Client(fleet.IngestKey, second);
        for (int from = StopAfter; from < drive.Messages.Count; from += 100)
        {
            await ingest.IngestOkAsync(drive.Body(from, Math.Min(from + 100, drive.Messages.Count)));
        }

        var uninterrupted = new TrackOracle();
        uninterrupted.Process(drive.Messages.Take(StopAfter).Select(m => m.Core));
        uninterrupted.Process([[lateCore]]);
        uninterrupted.Process(drive.Messages.Skip(StopAfter).Select(m => m.Core));
        Assert.Equal(uninterrupted.Response("van-late"), await fixture.Client(fleet.ReadKey, second).StateAsync("van-late"));
    }
}
