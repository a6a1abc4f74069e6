// Issue 15: the newest state per vehicle that the fused-state writer keeps for the fleet list.
using FusionService.Storage.FusedStates;
using FusionService.Storage.Partitions;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.FusedStates;

[Collection(PostgresCollection.Name)]
public sealed class VehicleLatestStateTests(PostgresFixture server)
{
    private static readonly Guid Fleet = Guid.Parse("0195a0c1-0000-7000-8000-0000000015f1");

    [Fact]
    public async Task Issue15_upserter_keeps_the_newest_state_and_an_older_instant_never_replaces_it()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        long t = TestTimes.At(TestTimes.Day, 9, 0, 0, 0);

        // Two vehicles in one batch, out of order within it: the newest of each wins.
        await FusedStateUpserter.UpsertAsync(schema.DataSource, [State("van-b", t + 2_000_000, 2.0), State("van-a", t + 1_000_000, 1.0), State("van-b", t, 0.5)]);
        Assert.Equal([("van-a", t + 1_000_000, 1.0), ("van-b", t + 2_000_000, 2.0)], await LatestAsync(schema));

        // A re-processed older instant (a late measurement) is stored in fused_states but leaves the newest alone.
        await FusedStateUpserter.UpsertAsync(schema.DataSource, [State("van-b", t + 1_000_000, 9.0)]);
        Assert.Equal([("van-a", t + 1_000_000, 1.0), ("van-b", t + 2_000_000, 2.0)], await LatestAsync(schema));

        // The same instant re-estimated replaces it, like the row in fused_states; a newer one moves it on.
        await FusedStateUpserter.UpsertAsync(schema.DataSource, [State("van-b", t + 2_000_000, 3.0), State("van-a", t + 5_000_000, 4.0)]);
        Assert.Equal([("van-a", t + 5_000_000, 4.0), ("van-b", t + 2_000_000, 3.0)], await LatestAsync(schema));

        // It agrees with the newest row of fused_states per vehicle (the query the fleet list used before).
        var newest = await new FusedStateRepository(schema.DataSource).LatestFusedStatesAsync(Fleet);
        Assert.Equal(newest.Select(r => (r.VehicleId, r.TimeUs, r.SpeedMps)), await LatestAsync(schema));
    }

    private static async Task<List<(string, long, double)>> LatestAsync(TestSchema schema)
    {
        var list = new List<(string, long, double)>();
        await using var connection = await schema.OpenAsync();
        await using var command = new NpgsqlCommand(
            "SELECT vehicle_id, time_us, speed_mps FROM vehicle_latest_states WHERE fleet_id = $1 ORDER BY vehicle_id COLLATE \"C\"", connection);
        command.Parameters.Add(new NpgsqlParameter { Value = Fleet });
        await using var reader = await command.ExecuteReaderAsync();
        while (await reader.ReadAsync())
        {
            list.Add((reader.GetString(0), reader.GetInt64(1), reader.GetDouble(2)));
        }

        return list;
    }

    private static FusedStateRow State(string vehicle, long timeUs, double speedMps)
    {
        var covariance = new double[FusedStateRow.PackedCovarianceLength];
        covariance[0] = 1.0;
        return new FusedStateRow(Fleet, vehicle, timeUs, 46.12, 170.47, 0.1, speedMps, 0, 0, 0, 1.0, covariance, 2.0, 1.0, 0.2);
    }
}
