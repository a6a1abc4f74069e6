// Stopwatch comparison of the fleet list's query before and after issue 15, on a day of stored fused states.
using System.Diagnostics;
using System.Globalization;
using FusionService.Storage.Cluster;
using FusionService.Storage.Fleets;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Migrations;
using FusionService.Storage.Partitions;
using FusionService.Storage.Schemas;
using FusionService.Storage.Vehicles;
using Npgsql;

namespace FusionService.Benchmarks;

/// <summary>
/// Stores a day of fused states (<c>vehicles</c> vans, one state per second from 08:00 to 16:30 UTC, invented values) in
/// a throwaway embedded PostgreSQL cluster, the last batch of each van through the write path
/// (<see cref="FusedStateUpserter"/>, which keeps <c>vehicle_latest_states</c>), one receipt per van and sensor kind,
/// then times with a stopwatch (<c>./build.sh bench fleet-list [vehicles] [repeats]</c>) the fleet list's query before
/// issue 15 (<see cref="FusedStateRepository.LatestFusedStatesAsync"/>: the newest row per vehicle over every stored
/// state) and after it (<see cref="FleetVehicleRepository.ListAsync"/>: one row per vehicle with receipts and alerts).
/// </summary>
internal static class FleetListSplit
{
    private const long SecondUs = 1_000_000;

    /// <summary>Runs the comparison and prints one line per query.</summary>
    public static async Task RunAsync(int vehicles, int repeats)
    {
        await using var cluster = await EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions { NoSync = true });
        const string schema = "fleet_list";
        await new MigrationRunner(cluster.ConnectionString, schema).RunAsync();
        await using var dataSource = NpgsqlDataSource.Create(StorageSchema.WithSearchPath(cluster.ConnectionString, schema));
        var day = new DateOnly(2026, 5, 1);
        await new PartitionMaintainer(dataSource).EnsurePartitionsAsync(day, day);
        var fleet = await new FleetAdmin(dataSource).CreateFleetAsync("fleet-list");
        long startUs = (new DateTimeOffset(2026, 5, 1, 8, 0, 0, TimeSpan.Zero).UtcTicks - DateTimeOffset.UnixEpoch.UtcTicks) / 10;
        const int seconds = (8 * 3600) + 1800;
        var covariance = new double[FusedStateRow.PackedCovarianceLength];
        covariance[0] = 1.0;

        var sw = Stopwatch.StartNew();
        long stored = 0;
        for (int v = 0; v < vehicles; v++)
        {
            string id = "van-" + v.ToString("D3", CultureInfo.InvariantCulture);
            var rows = new List<FusedStateRow>(seconds);
            for (int s = 0; s < seconds; s++)
            {
                double eastM = 8.0 * s % 1200, northM = 120.0 * (v % 8);
                rows.Add(new FusedStateRow(
                    fleet, id, startUs + (s * SecondUs), 46.12 + (northM / 111_132.0), 170.47 + (eastM / 77_200.0), 0.0, 8.0, 0.0, 0.0,
                    0.0, 1.0, covariance, 2.5, 1.5, 0.3));
            }

            // All but the last minute by binary COPY (the bulk of the day), the last minute through the write path.
            await using (var connection = await dataSource.OpenConnectionAsync())
            {
                await FusedStateWriter.WriteAsync(connection, null, rows[..^60]);
            }

            await FusedStateUpserter.UpsertAsync(dataSource, rows[^60..]);
            stored += rows.Count;
        }

        await using (var connection = await dataSource.OpenConnectionAsync())
        {
            await using var receipts = new NpgsqlCommand(
                "INSERT INTO vehicle_receipts SELECT $1, vehicle_id, k, now(), to_timestamp(time_us / 1e6) FROM vehicle_latest_states, "
                + "generate_series(0, 3) AS k WHERE fleet_id = $1", connection);
            receipts.Parameters.Add(new NpgsqlParameter { Value = fleet });
            await receipts.ExecuteNonQueryAsync();
            await using var analyze = new NpgsqlCommand("VACUUM ANALYZE", connection);
            await analyze.ExecuteNonQueryAsync();
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"stored {stored} fused states of {vehicles} vehicles in {sw.Elapsed.TotalSeconds:F1} s"));
        var before = new FusedStateRepository(dataSource);
        var after = new FleetVehicleRepository(dataSource);
        var query = new FleetVehicleQuery(fleet, DateTimeOffset.UtcNow, 120, 0.5, null, null, null, 1000);

        // One untimed call of each first (connection pool, plans).
        int beforeCount = (await before.LatestFusedStatesAsync(fleet)).Count;
        int afterCount = (await after.ListAsync(query)).Count;
        if (beforeCount != vehicles || afterCount != vehicles)
        {
            throw new InvalidOperationException($"expected {vehicles} vehicles, got {beforeCount} before and {afterCount} after");
        }

        var beforeMs = new List<double>();
        var afterMs = new List<double>();
        for (int r = 0; r < repeats; r++)
        {
            sw.Restart();
            await before.LatestFusedStatesAsync(fleet);
            beforeMs.Add(sw.Elapsed.TotalMilliseconds);
            sw.Restart();
            await after.ListAsync(query);
            afterMs.Add(sw.Elapsed.TotalMilliseconds);
        }

        Print("before (newest of every fused state)", beforeMs);
        Print("after (vehicle_latest_states)", afterMs);
    }

    private static void Print(string label, List<double> ms)
    {
        ms.Sort();
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"{label}: median {ms[ms.Count / 2]:F2} ms, min {ms[0]:F2} ms, max {ms[^1]:F2} ms over {ms.Count} runs"));
    }
}
