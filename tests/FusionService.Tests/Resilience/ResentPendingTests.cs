// A batch whose COMMIT reached the server while its client saw a failure (503) is resent; the resent messages are
// duplicates, and their measurements must still reach the track.
using FusionService.Ingest;
using FusionService.Storage.Measurements;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using Microsoft.Extensions.DependencyInjection;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class ResentPendingTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue13_a_resent_batch_stored_but_never_delivered_is_fused_and_judged()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-resent";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(5)), seed: 132);
        const int LostFrom = 100, LostTo = 150, End = 300;
        using var client = fixture.Client(fleet.IngestKey);
        await client.IngestOkAsync(drive.Body(0, LostFrom));

        // Committed, but the answer never reached the client: the rows are stored, no track was handed them.
        await fixture.StoreWithoutTrackAsync([.. drive.Messages.Skip(LostFrom).Take(LostTo - LostFrom)
            .SelectMany(m => m.Core).Select(m => MeasurementRows.ToRow(fleet.Id, Vehicle, m, DateTime.UtcNow))]);
        var resent = await client.IngestOkAsync(drive.Body(LostFrom, LostTo));
        Assert.Equal(0, resent.Accepted);
        Assert.Equal(LostTo - LostFrom, resent.Duplicate);

        // A second resend finds the rows judged (or the track holding them): nothing changes.
        await fixture.Host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        Assert.Equal(LostTo - LostFrom, (await client.IngestOkAsync(drive.Body(LostFrom, LostTo))).Duplicate);
        await client.IngestOkAsync(drive.Body(LostTo, End));

        var uninterrupted = new TrackOracle();
        uninterrupted.Process(drive.Messages.Take(End).Select(m => m.Core));
        Assert.Equal(uninterrupted.Response(Vehicle), await fixture.Client(fleet.ReadKey).StateAsync(Vehicle));
        await fixture.Host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id));
    }
}
