// A committed batch handed to its track after later commits of the same vehicle is fused in order, not judged too late.
using FusionService.Estimation.Models;
using FusionService.Scenarios;
using FusionService.Storage.Measurements;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using Microsoft.Extensions.DependencyInjection;

namespace FusionService.Tests.Resilience;

/// <summary>
/// Issue 13: a client posts a vehicle's batches one after another, each after the previous one's acknowledgement, to
/// whichever process answers; each process hands its commits to the vehicle's track on its own, so a slow hand-over
/// (a process starting or stopping) can arrive after later batches. The sender sent it first, so it is not late: the
/// track must fuse it where it belongs, even when later data has moved the replay window past it. Here one batch is
/// committed without being handed over, a minute and a half of later data is ingested, and then the batch is handed
/// to the track with the transaction id of a commit made right after it (older than the later batches' commits).
/// </summary>
[Collection(ServiceTests.Name)]
public sealed class OvertakenDeliveryTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue13_a_delivery_overtaken_by_later_commits_is_fused_in_order()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-overtaken";
        // A loop of 2 km, about four minutes of driving.
        var truth = RouteDriver.Drive(
            [new RouteWaypoint(0, 0), new RouteWaypoint(600, 0), new RouteWaypoint(600, 400), new RouteWaypoint(0, 400), new RouteWaypoint(0, 0)],
            new RouteDriverOptions { StartTimeUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(10)) },
            seed: 1305);
        var drive = TelemetryDrive.FromRun(Vehicle, MeasurementGenerator.Generate(truth, SensorSuite.ForProfile(NoiseProfile.DeliveryVan), seed: 1305));
        long startUs = drive.Messages[0].Core[0].TimeUs;
        int HeldFrom = Index(drive, startUs + 30_000_000), HeldTo = Index(drive, startUs + 33_000_000);
        await using var service = new ServiceFactory(fixture.ConnectionString);
        using var client = fixture.Client(fleet.IngestKey, service);
        for (int from = 0; from < HeldFrom; from += 100)
        {
            await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, HeldFrom)));
        }

        // Committed, acknowledged in effect, but its hand-over is slow.
        var held = drive.Messages.Skip(HeldFrom).Take(HeldTo - HeldFrom).SelectMany(m => m.Core).ToList();
        await fixture.StoreWithoutTrackAsync([.. held.Select(m => MeasurementRows.ToRow(fleet.Id, Vehicle, m, DateTime.UtcNow))]);
        long stamp = await fixture.CountAsync("SELECT pg_current_xact_id()::text::bigint");

        // Later batches, handed over at once; together they move the track's replay window past the held batch.
        int laterTo = Index(drive, held[^1].TimeUs + 90_000_000);
        Assert.InRange(laterTo, HeldTo + 1, drive.Messages.Count - 2);
        for (int from = HeldTo; from < laterTo; from += 100)
        {
            await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, laterTo)));
        }

        var grain = service.Services.GetRequiredService<IGrainFactory>().GetGrain<IVehicleTrackGrain>(GrainKeys.Of(fleet.Id, Vehicle));
        await grain.ProcessAsync([.. held.Select(m => TrackMeasurement.From(m))], new CommitStamp(stamp));
        await IngestTheRestAndCompareAsync(service, client, fleet, drive, Vehicle, laterTo, "3, 4");
    }

    [Fact]
    public async Task Issue16_batches_handed_over_together_out_of_order_are_fused_in_order()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-merged";
        var truth = RouteDriver.Drive(
            [new RouteWaypoint(0, 0), new RouteWaypoint(600, 0), new RouteWaypoint(600, 400), new RouteWaypoint(0, 400)],
            new RouteDriverOptions { StartTimeUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(10)) },
            seed: 1606);
        var drive = TelemetryDrive.FromRun(Vehicle, MeasurementGenerator.Generate(truth, SensorSuite.ForProfile(NoiseProfile.DeliveryVan), seed: 1606));
        long startUs = drive.Messages[0].Core[0].TimeUs;
        int firstTo = Index(drive, startUs + 30_000_000), secondTo = Index(drive, startUs + 40_000_000), thirdTo = Index(drive, startUs + 50_000_000);
        await using var service = new ServiceFactory(fixture.ConnectionString);
        using var client = fixture.Client(fleet.IngestKey, service);
        for (int from = 0; from < firstTo; from += 100)
        {
            await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, firstTo)));
        }

        // Two commits the dispatcher found queued behind a running call, the later one first in the mailbox.
        var earlier = drive.Messages.Skip(firstTo).Take(secondTo - firstTo).SelectMany(m => m.Core).ToList();
        var later = drive.Messages.Skip(secondTo).Take(thirdTo - secondTo).SelectMany(m => m.Core).ToList();
        await fixture.StoreWithoutTrackAsync([.. earlier.Select(m => MeasurementRows.ToRow(fleet.Id, Vehicle, m, DateTime.UtcNow))]);
        long earlierStamp = await fixture.CountAsync("SELECT pg_current_xact_id()::text::bigint");
        await fixture.StoreWithoutTrackAsync([.. later.Select(m => MeasurementRows.ToRow(fleet.Id, Vehicle, m, DateTime.UtcNow))]);
        long laterStamp = await fixture.CountAsync("SELECT pg_current_xact_id()::text::bigint");
        Assert.True(laterStamp > earlierStamp);

        await service.Services.GetRequiredService<TrackDispatcher>().WhenIdleAsync();
        var grain = service.Services.GetRequiredService<IGrainFactory>().GetGrain<IVehicleTrackGrain>(GrainKeys.Of(fleet.Id, Vehicle));
        await grain.ProcessManyAsync(
        [
            new TrackDelivery([.. later.Select(m => TrackMeasurement.From(m))], new CommitStamp(laterStamp)),
            new TrackDelivery([.. earlier.Select(m => TrackMeasurement.From(m))], new CommitStamp(earlierStamp)),
        ]);
        await IngestTheRestAndCompareAsync(service, client, fleet, drive, Vehicle, thirdTo, "2, 3, 4");
    }

    /// <summary>
    /// Ingests the drive's messages from <paramref name="from"/> on, then checks the track's state against an uninterrupted
    /// run of every message and that no stored measurement of the fleet has one of <paramref name="outcomeCodes"/>.
    /// </summary>
    private async Task IngestTheRestAndCompareAsync(
        ServiceFactory service, HttpClient client, TestFleet fleet, TelemetryDrive drive, string vehicle, int from, string outcomeCodes)
    {
        for (; from < drive.Messages.Count; from += 100)
        {
            await client.IngestOkAsync(drive.Body(from, Math.Min(from + 100, drive.Messages.Count)));
        }

        await service.Services.GetRequiredService<TrackDispatcher>().WhenIdleAsync();
        var uninterrupted = new TrackOracle();
        uninterrupted.Process(drive.Messages.Select(m => m.Core));
        Assert.Equal(uninterrupted.Response(vehicle), await fixture.Client(fleet.ReadKey, service).StateAsync(vehicle));
        await service.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome IN (" + outcomeCodes + ")", fleet.Id));
    }

    /// <summary>The index of the drive's first message after <paramref name="timeUs"/>.</summary>
    private static int Index(TelemetryDrive drive, long timeUs) =>
        drive.Messages.Select((m, i) => (m, i)).First(x => x.m.Core[0].TimeUs > timeUs).i;
}
