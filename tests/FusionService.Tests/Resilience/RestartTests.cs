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
}
