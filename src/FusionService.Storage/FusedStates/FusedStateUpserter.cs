// Bulk insert-or-replace of fused states: binary COPY into a staging table, then INSERT ... ON CONFLICT DO UPDATE.
using Npgsql;

namespace FusionService.Storage.FusedStates;

/// <summary>
/// Stores fused states, replacing a stored one of the same vehicle and instant: a track that re-processes after a
/// late measurement emits a newer estimate for an instant it has already reported, and the newer one wins. Keeps
/// <c>vehicle_latest_states</c> (the newest state per vehicle, read by the fleet list) in the same transaction.
/// </summary>
public static class FusedStateUpserter
{
    private const string CreateStaging =
        "CREATE TEMP TABLE IF NOT EXISTS fused_staging (LIKE fused_states INCLUDING DEFAULTS) ON COMMIT DELETE ROWS";

    private const string Upsert = """
        INSERT INTO fused_states SELECT * FROM fused_staging
        ON CONFLICT (fleet_id, vehicle_id, time_us, measured_at) DO UPDATE SET
            lat_deg = EXCLUDED.lat_deg, lon_deg = EXCLUDED.lon_deg, heading_rad = EXCLUDED.heading_rad,
            speed_mps = EXCLUDED.speed_mps, yaw_rate_rps = EXCLUDED.yaw_rate_rps, accel_mps2 = EXCLUDED.accel_mps2,
            gyro_bias_rps = EXCLUDED.gyro_bias_rps, wheel_scale = EXCLUDED.wheel_scale, covariance = EXCLUDED.covariance,
            ellipse_major_m = EXCLUDED.ellipse_major_m, ellipse_minor_m = EXCLUDED.ellipse_minor_m,
            ellipse_orientation_rad = EXCLUDED.ellipse_orientation_rad
        """;

    // The newest state per vehicle for the fleet list, in the same transaction; rows taken in one order (fleet, then the
    // id's bytes) like the vehicle inserts of the ingest path, and an older instant (a re-processed one) never replaces
    // a newer one.
    private const string UpsertLatest = """
        INSERT INTO vehicle_latest_states AS l (fleet_id, vehicle_id, time_us, lat_deg, lon_deg, heading_rad, speed_mps,
                                                ellipse_major_m, ellipse_minor_m, ellipse_orientation_rad, updated_at)
        SELECT DISTINCT ON (fleet_id, vehicle_id COLLATE "C") fleet_id, vehicle_id, time_us, lat_deg, lon_deg, heading_rad,
               speed_mps, ellipse_major_m, ellipse_minor_m, ellipse_orientation_rad, now()
        FROM fused_staging
        ORDER BY fleet_id, vehicle_id COLLATE "C", time_us DESC
        ON CONFLICT (fleet_id, vehicle_id) DO UPDATE SET
            time_us = EXCLUDED.time_us, lat_deg = EXCLUDED.lat_deg, lon_deg = EXCLUDED.lon_deg,
            heading_rad = EXCLUDED.heading_rad, speed_mps = EXCLUDED.speed_mps, ellipse_major_m = EXCLUDED.ellipse_major_m,
            ellipse_minor_m = EXCLUDED.ellipse_minor_m, ellipse_orientation_rad = EXCLUDED.ellipse_orientation_rad,
            updated_at = EXCLUDED.updated_at
        WHERE l.time_us <= EXCLUDED.time_us
        """;

    /// <summary>
    /// Stores <paramref name="rows"/> in one transaction; of several rows with the same vehicle and instant the last
    /// one wins, and it replaces a stored row of that vehicle and instant.
    /// </summary>
    /// <param name="dataSource">Data source of the store's schema.</param>
    /// <param name="rows">Rows in the order they were produced; the daily partition of each must exist.</param>
    /// <param name="cancellationToken">Cancels the statements.</param>
    /// <returns>Number of rows inserted or replaced.</returns>
    public static async Task<int> UpsertAsync(
        NpgsqlDataSource dataSource, IReadOnlyList<FusedStateRow> rows, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        ArgumentNullException.ThrowIfNull(rows);
        var last = new Dictionary<(Guid, string, long), FusedStateRow>();
        foreach (var row in rows)
        {
            last[(row.FleetId, row.VehicleId, row.TimeUs)] = row;
        }

        if (last.Count == 0)
        {
            return 0;
        }

        var connection = await dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                await using (var create = new NpgsqlCommand(CreateStaging, connection, transaction))
                {
                    await create.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                await FusedStateWriter.WriteIntoAsync(connection, transaction, [.. last.Values], "fused_staging", cancellationToken).ConfigureAwait(false);
                int stored;
                await using (var upsert = new NpgsqlCommand(Upsert, connection, transaction))
                {
                    stored = await upsert.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                await using (var latest = new NpgsqlCommand(UpsertLatest, connection, transaction))
                {
                    await latest.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return stored;
            }
        }
    }
}
