// The token that tells a restored track which deliveries it already holds is the commit's PostgreSQL transaction id.
using FusionService.Storage.Measurements;
using FusionService.Ingest;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using Microsoft.Extensions.DependencyInjection;
using Npgsql;

namespace FusionService.Tests.Resilience;

/// <summary>
/// Issue 13: commit numbers counted per process told a track only about its own process's commits, so a batch committed
/// by another process before the track's restore was judged again when its delivery arrived, and a batch more than the
/// 60 s replay window behind the restored data was stored as too late over the restore's verdicts. The token is now the
/// commit's transaction id (<c>pg_current_xact_id()</c>), checked against the restore read's snapshot
/// (<c>pg_visible_in_snapshot</c> rule, PostgreSQL documentation, "System Information Functions", section 9.27).
/// </summary>
[Collection(ServiceTests.Name)]
public sealed class CommitTokenTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue13_a_delivery_the_restore_already_read_is_skipped_whoever_committed_it()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-token";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(6)), seed: 135);
        const int Early = 50;
        int end = drive.Messages.Count, stored = end - 100;
        Assert.True(drive.Messages[stored - 1].Core[0].TimeUs - drive.Messages[Early - 1].Core[0].TimeUs > 70_000_000, "the early batch must lie beyond the 60 s replay window");

        // Committed as if by another process, whose deliveries were still on their way: the track is not active yet.
        long first = await CommitAsync(fleet.Id, Vehicle, drive, 0, stored);
        var grain = fixture.Host.Services.GetRequiredService<IGrainFactory>().GetGrain<IVehicleTrackGrain>(GrainKeys.Of(fleet.Id, Vehicle));

        // The first delivery activates the track, whose restore reads all of them; the delivery itself is then skipped.
        await grain.ProcessAsync(Batch(drive, 0, Early), new CommitStamp(first));
        await grain.ProcessAsync(Batch(drive, Early, stored), new CommitStamp(first));

        // A commit after the restore is new to the track and processed.
        long later = await CommitAsync(fleet.Id, Vehicle, drive, stored, end);
        Assert.True(later > first);
        await grain.ProcessAsync(Batch(drive, stored, end), new CommitStamp(later));

        await fixture.Host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome IN (2, 4)", fleet.Id));
        var uninterrupted = new TrackOracle();
        uninterrupted.Process(drive.Messages.Select(m => m.Core));
        Assert.Equal(uninterrupted.Response(Vehicle), await fixture.Client(fleet.ReadKey).StateAsync(Vehicle));
    }

    [Fact]
    public void A_snapshot_holds_the_transactions_that_completed_before_it()
    {
        // pg_snapshot text form xmin:xmax:xip_list (PostgreSQL documentation, table "Snapshot Components").
        var snapshot = CommitSnapshot.Parse("100:105:100,102");
        Assert.True(snapshot.Holds(99));
        Assert.False(snapshot.Holds(100));
        Assert.True(snapshot.Holds(101));
        Assert.False(snapshot.Holds(102));
        Assert.True(snapshot.Holds(104));
        Assert.False(snapshot.Holds(105));
        Assert.False(snapshot.Holds(0));
        Assert.Throws<FormatException>(() => CommitSnapshot.Parse("100:105"));
    }

    private static TrackMeasurement[] Batch(TelemetryDrive drive, int from, int to) =>
        [.. drive.Messages.Skip(from).Take(to - from).SelectMany(m => m.Core).Select(m => TrackMeasurement.From(m))];

    private async Task<long> CommitAsync(Guid fleetId, string vehicle, TelemetryDrive drive, int from, int to)
    {
        var rows = drive.Messages.Skip(from).Take(to - from).SelectMany(m => m.Core)
            .Select(m => MeasurementRows.ToRow(fleetId, vehicle, m, DateTime.UtcNow)).ToList();
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var transaction = await connection.BeginTransactionAsync();
        Assert.Equal(rows.Count, (await MeasurementIngest.InsertNewAsync(connection, transaction, rows)).Inserted.Count);
        await using var command = new NpgsqlCommand("SELECT pg_current_xact_id()::text::bigint", connection, transaction);
        long id = (long)(await command.ExecuteScalarAsync())!;
        await transaction.CommitAsync();
        return id;
    }
}
