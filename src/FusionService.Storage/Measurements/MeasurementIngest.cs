// Idempotent bulk insert: binary COPY into a staging table, then INSERT ... ON CONFLICT DO NOTHING RETURNING.
using FusionService.Storage.Bulk;
using FusionService.Storage.Time;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Stores measurements that may already be stored (client retries) and says which rows were new: the rows are
/// copied with binary COPY into a temporary staging table, the vehicles they name are created when missing, and
/// <c>INSERT INTO measurements SELECT ... ON CONFLICT DO NOTHING RETURNING</c> moves the new ones over. Because the
/// primary key decides, duplicate detection survives restarts of the service.
/// </summary>
public static class MeasurementIngest
{
    private const string CreateStaging =
        "CREATE TEMP TABLE IF NOT EXISTS ingest_staging (LIKE measurements INCLUDING DEFAULTS) ON COMMIT DELETE ROWS";

    private const string Copy =
        "COPY ingest_staging (fleet_id, vehicle_id, kind, time_us, measured_at, message_key, received_at, "
        + "v0, v1, v2, flags, outcome, nis, track_reset) FROM STDIN (FORMAT BINARY)";

    private const string InsertVehicles =
        "INSERT INTO vehicles (fleet_id, vehicle_id) SELECT DISTINCT fleet_id, vehicle_id FROM ingest_staging "
        + "ON CONFLICT DO NOTHING";

    private const string InsertNew =
        "INSERT INTO measurements SELECT * FROM ingest_staging ON CONFLICT DO NOTHING "
        + "RETURNING fleet_id, vehicle_id, kind, time_us, message_key";

    /// <summary>
    /// Stores the rows not stored yet, inside <paramref name="transaction"/> (the caller commits), and returns the
    /// keys of the rows this call inserted. Two rows with the same key in <paramref name="rows"/> insert once.
    /// </summary>
    /// <param name="connection">An open connection whose <c>search_path</c> names the store's schema.</param>
    /// <param name="transaction">The connection's open transaction.</param>
    /// <param name="rows">Rows; the daily partition of each must exist and its fleet must exist.</param>
    /// <param name="cancellationToken">Cancels the statements.</param>
    /// <returns>Keys of the inserted rows (each once).</returns>
    /// <exception cref="PostgresException">The server refused the rows (missing partition, violated check); nothing is stored.</exception>
    public static async Task<HashSet<MeasurementKey>> InsertNewAsync(
        NpgsqlConnection connection,
        NpgsqlTransaction transaction,
        IReadOnlyList<MeasurementRow> rows,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(connection);
        ArgumentNullException.ThrowIfNull(transaction);
        ArgumentNullException.ThrowIfNull(rows);
        var inserted = new HashSet<MeasurementKey>();
        if (rows.Count == 0)
        {
            return inserted;
        }

        await using (var create = new NpgsqlCommand(CreateStaging, connection, transaction))
        {
            await create.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
        }

        var importer = await connection.BeginBinaryImportAsync(Copy, cancellationToken).ConfigureAwait(false);
        await using (importer.ConfigureAwait(false))
        {
            foreach (var row in rows)
            {
                if (row.ReceivedAtUtc.Kind != DateTimeKind.Utc || string.IsNullOrEmpty(row.VehicleId))
                {
                    throw new ArgumentException("Rows need a vehicle id and a UTC receive time.", nameof(rows));
                }

                await MeasurementWriter.WriteRowAsync(importer, row, cancellationToken).ConfigureAwait(false);
            }

            await importer.CompleteAsync(cancellationToken).ConfigureAwait(false);
        }

        await using (var vehicles = new NpgsqlCommand(InsertVehicles, connection, transaction))
        {
            await vehicles.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
        }

        await using (var insert = new NpgsqlCommand(InsertNew, connection, transaction))
        {
            var reader = await insert.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            await using (reader.ConfigureAwait(false))
            {
                while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                {
                    inserted.Add(new MeasurementKey(
                        reader.GetGuid(0), reader.GetString(1), reader.GetInt16(2), reader.GetInt64(3), reader.GetInt64(4)));
                }
            }
        }

        return inserted;
    }
}
