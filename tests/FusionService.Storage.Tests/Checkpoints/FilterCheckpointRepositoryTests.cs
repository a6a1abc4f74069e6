// Checkpoints: upsert replaces, newest strictly before an instant, listing and deleting ranges, retention, per vehicle.
using FusionService.Storage.Checkpoints;
using FusionService.Storage.Fleets;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.Checkpoints;

[Collection(PostgresCollection.Name)]
public sealed class FilterCheckpointRepositoryTests(PostgresFixture server)
{
    [Fact]
    public async Task Newest_checkpoint_before_is_strictly_before_and_per_vehicle()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("checkpoint fleet");
        var repository = new FilterCheckpointRepository(schema.DataSource);
        var t = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);
        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t, 1));
        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t + 10_000_000, 2));
        await repository.UpsertAsync(Checkpoint(fleet, "van-2", t + 5_000_000, 3));

        Assert.Null(await repository.NewestCheckpointBeforeAsync(fleet, "van-1", t));
        Assert.Equal(t, (await repository.NewestCheckpointBeforeAsync(fleet, "van-1", t + 1))?.TimeUs);
        Assert.Equal(t, (await repository.NewestCheckpointBeforeAsync(fleet, "van-1", t + 10_000_000))?.TimeUs);
        var newest = await repository.NewestCheckpointBeforeAsync(fleet, "van-1", long.MaxValue);
        Assert.NotNull(newest);
        AssertSame(Checkpoint(fleet, "van-1", t + 10_000_000, 2), newest.Value);
        Assert.Null(await repository.NewestCheckpointBeforeAsync(fleet, "van-3", long.MaxValue));
        Assert.Null(await repository.NewestCheckpointBeforeAsync(Guid.NewGuid(), "van-1", long.MaxValue));
    }

    [Fact]
    public async Task Delete_between_keeps_both_bounds_and_the_other_vehicles()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("pruned fleet");
        var repository = new FilterCheckpointRepository(schema.DataSource);
        var t = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);
        for (int i = 0; i < 4; i++)
        {
            await repository.UpsertAsync(Checkpoint(fleet, "van-1", t + (i * 10_000_000), i));
        }

        await repository.UpsertAsync(Checkpoint(fleet, "van-2", t + 10_000_000, 9));
        Assert.Equal(2, await repository.DeleteBetweenAsync(fleet, "van-1", t, t + 30_000_000));
        var left = await repository.CheckpointsBetweenAsync(fleet, "van-1", long.MinValue, long.MaxValue);
        Assert.Equal([t, t + 30_000_000], left.Select(c => c.TimeUs));
        Assert.Equal(t + 10_000_000, (await repository.NewestCheckpointBeforeAsync(fleet, "van-2", long.MaxValue))?.TimeUs);
    }

    [Fact]
    public async Task Checkpoints_between_are_strictly_inside_oldest_first_and_per_vehicle()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("listed fleet");
        var repository = new FilterCheckpointRepository(schema.DataSource);
        var t = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);
        foreach (int i in new[] { 3, 0, 2, 1 })
        {
            await repository.UpsertAsync(Checkpoint(fleet, "van-1", t + (i * 10_000_000), i));
        }

        await repository.UpsertAsync(Checkpoint(fleet, "van-2", t + 15_000_000, 9));
        var inside = await repository.CheckpointsBetweenAsync(fleet, "van-1", t, t + 30_000_000);
        Assert.Equal([t + 10_000_000, t + 20_000_000], inside.Select(c => c.TimeUs));
        AssertSame(Checkpoint(fleet, "van-1", t + 10_000_000, 1), inside[0]);
        Assert.Empty(await repository.CheckpointsBetweenAsync(fleet, "van-3", long.MinValue, long.MaxValue));
    }

    [Fact]
    public async Task Retention_deletes_old_checkpoints_but_every_vehicle_keeps_its_newest()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("retained fleet");
        var repository = new FilterCheckpointRepository(schema.DataSource);
        var t = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);
        const long Day = 86_400_000_000;

        // van-1: three old ones and a recent one; van-2 (parked for long): only old ones; van-3: only recent ones.
        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t - (3 * Day), 1));
        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t - (2 * Day), 2));
        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t - Day, 3));
        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t, 4));
        await repository.UpsertAsync(Checkpoint(fleet, "van-2", t - (3 * Day), 5));
        await repository.UpsertAsync(Checkpoint(fleet, "van-2", t - (2 * Day), 6));
        await repository.UpsertAsync(Checkpoint(fleet, "van-3", t, 7));
        await repository.UpsertAsync(Checkpoint(fleet, "van-3", t + 1, 8));

        Assert.Equal(4, await repository.DeleteOlderThanAsync(t - (Day / 2)));
        Assert.Equal([t], (await repository.CheckpointsBetweenAsync(fleet, "van-1", long.MinValue, long.MaxValue)).Select(c => c.TimeUs));
        Assert.Equal([t - (2 * Day)], (await repository.CheckpointsBetweenAsync(fleet, "van-2", long.MinValue, long.MaxValue)).Select(c => c.TimeUs));
        Assert.Equal([t, t + 1], (await repository.CheckpointsBetweenAsync(fleet, "van-3", long.MinValue, long.MaxValue)).Select(c => c.TimeUs));
    }

    [Fact]
    public async Task Delete_from_removes_the_vehicles_checkpoints_at_and_after_the_instant_only()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("delete-from fleet");
        var repository = new FilterCheckpointRepository(schema.DataSource);
        var t = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);

        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t, 1));
        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t + 10_000_000, 2));
        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t + 20_000_000, 3));
        await repository.UpsertAsync(Checkpoint(fleet, "van-2", t + 20_000_000, 4));
        Assert.Equal(2, await repository.DeleteFromAsync(fleet, "van-1", t + 10_000_000));
        Assert.Equal(t, (await repository.NewestCheckpointBeforeAsync(fleet, "van-1", long.MaxValue))?.TimeUs);
        Assert.Equal(t + 20_000_000, (await repository.NewestCheckpointBeforeAsync(fleet, "van-2", long.MaxValue))?.TimeUs);
    }

    [Fact]
    public async Task Upsert_of_the_same_instant_replaces_the_checkpoint()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("upsert fleet");
        var repository = new FilterCheckpointRepository(schema.DataSource);
        var t = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);

        await repository.UpsertAsync(Checkpoint(fleet, "van-1", t, 1));
        var replacement = Checkpoint(fleet, "van-1", t, 2) with { PayloadVersion = 3, Payload = new byte[] { 0, 255, 0 } };
        await repository.UpsertAsync(replacement);

        Assert.Equal(1L, await schema.ScalarAsync<long>("SELECT count(*) FROM filter_checkpoints"));
        AssertSame(replacement, (await repository.NewestCheckpointBeforeAsync(fleet, "van-1", t + 1))!.Value);
    }

    [Fact]
    public async Task A_checkpoint_of_an_unknown_fleet_is_refused()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var repository = new FilterCheckpointRepository(schema.DataSource);

        var error = await Assert.ThrowsAsync<PostgresException>(() => repository.UpsertAsync(Checkpoint(Guid.NewGuid(), "van-1", 0, 1)));

        Assert.Equal(PostgresErrorCodes.ForeignKeyViolation, error.SqlState);
    }

    private static FilterCheckpointRow Checkpoint(Guid fleet, string vehicle, long timeUs, int seed)
    {
        var payload = new byte[64 * seed];
        for (var i = 0; i < payload.Length; i++)
        {
            payload[i] = (byte)((i * 31) + seed);
        }

        return new FilterCheckpointRow(fleet, vehicle, timeUs, 52.0 + (seed * 1e-6), 13.0 - (seed * 1e-6), 1, payload);
    }

    private static void AssertSame(FilterCheckpointRow expected, FilterCheckpointRow actual)
    {
        Assert.Equal(expected.FleetId, actual.FleetId);
        Assert.Equal(expected.VehicleId, actual.VehicleId);
        Assert.Equal(expected.TimeUs, actual.TimeUs);
        AssertBits.Equal(expected.AnchorLatDeg, actual.AnchorLatDeg, "anchor_lat_deg");
        AssertBits.Equal(expected.AnchorLonDeg, actual.AnchorLonDeg, "anchor_lon_deg");
        Assert.Equal(expected.PayloadVersion, actual.PayloadVersion);
        Assert.Equal(expected.Payload.ToArray(), actual.Payload.ToArray());
    }
}
