// One stored measurement the filter fails on numerically must not stop its vehicle's track: judged, skipped, alerted.
using FusionService.Alerts;
using FusionService.Estimation.Measurements;
using FusionService.Ingest;
using FusionService.Storage.Measurements;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using Microsoft.Extensions.DependencyInjection;

namespace FusionService.Tests.Resilience;

/// <summary>
/// Issue 13: a GNSS fix stored with an accuracy of 1e50 m (accepted before the ingest bounds existed; the door now
/// refuses it, so the test commits it through the group commit and hands it to the track through the dispatcher, the
/// path after the parser) makes the filter fail (its innovation covariance is not positive definite). The track must
/// judge it unusable (outcome 8), raise <c>measurement_unusable</c>, fuse every later message, and do the same when it
/// is rebuilt from the store after a restart; its state equals the estimation core run on the same measurements.
/// </summary>
[Collection(ServiceTests.Name)]
public sealed class PoisonMeasurementTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue13_a_poison_measurement_is_judged_skipped_and_alerted_live_and_after_a_restart()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-poison";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(7)), seed: 133);
        const int PoisonAfter = 150, RestartAfter = 300;
        int end = drive.Messages.Count;
        var fix = drive.Messages[PoisonAfter - 1].Core.Max(m => m.TimeUs);
        var anchor = drive.Messages.Take(PoisonAfter).SelectMany(m => m.Core).Last(m => m.Kind == SensorKind.GnssPosition);
        var poison = Measurement.FromStored(
            fix + 1, Measurement.OrderKeyOf(SensorKind.GnssPosition, MessageKeys.FromId("poison-fix")), anchor.AsGnssFix().LatitudeDeg, anchor.AsGnssFix().LongitudeDeg, float.PositiveInfinity);

        await using (var first = new ServiceFactory(fixture.ConnectionString))
        {
            using var client = fixture.Client(fleet.IngestKey, first);
            for (int from = 0; from < PoisonAfter; from += 50)
            {
                await client.IngestOkAsync(drive.Body(from, from + 50));
            }

            var row = MeasurementRows.ToRow(fleet.Id, Vehicle, poison, DateTime.UtcNow) with { V2 = 1e50 };
            var committed = await first.Services.GetRequiredService<GroupCommitWriter>().CommitAsync([row]);
            Assert.Single(committed.Inserted);
            var fresh = new Dictionary<string, List<TrackMeasurement>>(StringComparer.Ordinal) { [Vehicle] = [TrackMeasurement.From(poison)] };
            await await first.Services.GetRequiredService<TrackDispatcher>().DispatchAsync(fleet.Id, fresh, committed.TransactionIdOf(fleet.Id, Vehicle));

            for (int from = PoisonAfter; from < RestartAfter; from += 50)
            {
                await client.IngestOkAsync(drive.Body(from, from + 50));
            }

            var live = new TrackOracle();
            live.Process(drive.Messages.Take(PoisonAfter).Select(m => m.Core));
            live.Process([[poison]]);
            live.Process(drive.Messages.Skip(PoisonAfter).Take(RestartAfter - PoisonAfter).Select(m => m.Core));
            Assert.Equal(live.Response(Vehicle), await fixture.Client(fleet.ReadKey, first).StateAsync(Vehicle));
            await first.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
            Assert.Equal(8, await OutcomeOfAsync(fleet.Id, poison));
            Assert.Equal(1, await fixture.CountAsync(
                "SELECT count(*) FROM alerts WHERE fleet_id = $1 AND vehicle_id = $2 AND kind = $3 AND details->>'last_reason' LIKE '%not positive definite%'",
                fleet.Id, Vehicle, AlertKinds.MeasurementUnusable));
        }

        // A crash before any checkpoint: the next activation re-processes every stored row, the poison among them.
        await fixture.CountAsync("WITH d AS (DELETE FROM filter_checkpoints WHERE fleet_id = $1 RETURNING 1) SELECT count(*) FROM d", fleet.Id);
        await using var second = new ServiceFactory(fixture.ConnectionString);
        using var ingest = fixture.Client(fleet.IngestKey, second);
        for (int from = RestartAfter; from < end; from += 50)
        {
            await ingest.IngestOkAsync(drive.Body(from, Math.Min(from + 50, end)));
        }

        var uninterrupted = new TrackOracle();
        uninterrupted.Process(drive.Messages.Take(PoisonAfter).Select(m => m.Core));
        uninterrupted.Process([[poison]]);
        uninterrupted.Process(drive.Messages.Skip(PoisonAfter).Select(m => m.Core));
        Assert.Equal(uninterrupted.Response(Vehicle), await fixture.Client(fleet.ReadKey, second).StateAsync(Vehicle));
        await second.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        Assert.Equal(8, await OutcomeOfAsync(fleet.Id, poison));
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id));
        Assert.Equal(1, await fixture.CountAsync(
            "SELECT count(*) FROM alerts WHERE fleet_id = $1 AND vehicle_id = $2 AND kind = $3", fleet.Id, Vehicle, AlertKinds.MeasurementUnusable));

        // The smoothed track reads the same stored rows and skips the poison too.
        using var read = fixture.Client(fleet.ReadKey, second);
        long startUs = drive.Messages[0].Core[0].TimeUs;
        long endUs = drive.Messages[^1].Core.Max(m => m.TimeUs) + 1_000_000;
        var smoothed = await read.GetAsync($"/v1/vehicles/{Vehicle}/track?kind=smoothed&from={startUs / 1000}&to={endUs / 1000}");
        Assert.Equal(System.Net.HttpStatusCode.OK, smoothed.StatusCode);
    }

    private Task<long> OutcomeOfAsync(Guid fleetId, Measurement m) => fixture.CountAsync(
        "SELECT outcome FROM " + JudgedSql.OfFleet + " WHERE kind = $2 AND time_us = $3 AND message_key = $4",
        fleetId, (short)m.Kind, m.TimeUs, (long)m.MessageKey);
}
