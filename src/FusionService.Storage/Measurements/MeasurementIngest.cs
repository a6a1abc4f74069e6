// Idempotent bulk insert: binary COPY into a staging table, then INSERT ... ON CONFLICT DO NOTHING RETURNING.
using FusionService.Estimation.Time;
using FusionService.Storage.Bulk;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Stores measurements that may already be stored (client retries) and says which rows were new. Optimistic path
/// first: the rows (made unique in memory) go straight into <c>measurements</c> with binary COPY inside a savepoint,
/// which is the fastest bulk path and succeeds whenever no row is stored yet, the common case. When the primary key
/// refuses a row (SQLSTATE 23505), the savepoint is rolled back and the careful path runs: binary COPY into a
/// temporary staging table and <c>INSERT INTO measurements SELECT ... ON CONFLICT DO NOTHING RETURNING</c>. The
/// vehicles the rows name are created when missing. Because the primary key decides, duplicate detection survives
/// restarts of the service.
/// </summary>
public static class MeasurementIngest
{
    private const string CreateStaging =
        "CREATE TEMP TABLE IF NOT EXISTS ingest_staging (LIKE measurements INCLUDING DEFAULTS) ON COMMIT DELETE ROWS";

    private const string Copy =
        "COPY ingest_staging (fleet_id, vehicle_id, kind, time_us, measured_at, message_key, received_at, "
        + "v0, v1, v2, flags, outcome, nis, track_reset) FROM STDIN (FORMAT BINARY)";

    // Both vehicle inserts take their rows in one order (fleet, then the id's bytes): two transactions that create the
    // same new vehicles then wait for each other instead of each holding one and waiting for the other (a deadlock).
    private const string InsertVehicles =
        "INSERT INTO vehicles (fleet_id, vehicle_id) SELECT f, v FROM (SELECT DISTINCT fleet_id AS f, vehicle_id AS v FROM ingest_staging) AS d "
        + "ORDER BY f, v COLLATE \"C\" ON CONFLICT DO NOTHING";

    private const string InsertVehiclesFromArrays =
        "INSERT INTO vehicles (fleet_id, vehicle_id) SELECT f, v FROM unnest($1::uuid[], $2::text[]) AS u(f, v) "
        + "ORDER BY f, v COLLATE \"C\" ON CONFLICT DO NOTHING";

    // The newest receipt per vehicle and sensor kind (vehicle_receipts, read by the fleet list), in the order of the
    // vehicle inserts for the same reason; never moves a time backwards.
    private const string UpsertReceipts =
        "INSERT INTO vehicle_receipts AS r (fleet_id, vehicle_id, kind, last_received_at, last_measured_at) "
        + "SELECT f, v, k, rec, mea FROM unnest($1::uuid[], $2::text[], $3::smallint[], $4::timestamptz[], $5::timestamptz[]) AS u(f, v, k, rec, mea) "
        + "ORDER BY f, v COLLATE \"C\", k "
        + "ON CONFLICT (fleet_id, vehicle_id, kind) DO UPDATE SET last_received_at = GREATEST(r.last_received_at, EXCLUDED.last_received_at), "
        + "last_measured_at = GREATEST(r.last_measured_at, EXCLUDED.last_measured_at)";

    private const string UniqueViolation = "23505";

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

        var unique = new List<MeasurementRow>(rows.Count);
        foreach (var row in rows)
        {
            if (row.ReceivedAtUtc.Kind != DateTimeKind.Utc || string.IsNullOrEmpty(row.VehicleId))
            {
                throw new ArgumentException("Rows need a vehicle id and a UTC receive time.", nameof(rows));
            }

            if (inserted.Add(MeasurementKey.Of(row)))
            {
                unique.Add(row);
            }
        }

        await transaction.SaveAsync("optimistic_copy", cancellationToken).ConfigureAwait(false);
        try
        {
            await InsertVehiclesAsync(connection, transaction, unique, cancellationToken).ConfigureAwait(false);
            await MeasurementWriter.WriteAsync(connection, transaction, unique, cancellationToken).ConfigureAwait(false);
            await transaction.ReleaseAsync("optimistic_copy", cancellationToken).ConfigureAwait(false);
            await RecordReceiptsAsync(connection, transaction, unique, cancellationToken).ConfigureAwait(false);
            return inserted;
        }
        catch (PostgresException ex) when (ex.SqlState == UniqueViolation)
        {
            await transaction.RollbackAsync("optimistic_copy", cancellationToken).ConfigureAwait(false);
            inserted.Clear();
        }

        await using (var create = new NpgsqlCommand(CreateStaging, connection, transaction))
        {
            await create.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
        }

        var importer = await connection.BeginBinaryImportAsync(Copy, cancellationToken).ConfigureAwait(false);
        await using (importer.ConfigureAwait(false))
        {
            foreach (var row in unique)
            {
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

        await RecordReceiptsAsync(connection, transaction, unique, cancellationToken).ConfigureAwait(false);
        return inserted;
    }

    // Every received row counts, a duplicate of a stored one too: the vehicle was heard from.
    private static async Task RecordReceiptsAsync(
        NpgsqlConnection connection, NpgsqlTransaction transaction, List<MeasurementRow> rows, CancellationToken cancellationToken)
    {
        var newest = new Dictionary<(Guid FleetId, string VehicleId, short Kind), (DateTime ReceivedAt, long TimeUs)>();
        foreach (var row in rows)
        {
            var key = (row.FleetId, row.VehicleId, row.Kind);
            newest[key] = newest.TryGetValue(key, out var seen)
                ? (row.ReceivedAtUtc > seen.ReceivedAt ? row.ReceivedAtUtc : seen.ReceivedAt, Math.Max(seen.TimeUs, row.TimeUs))
                : (row.ReceivedAtUtc, row.TimeUs);
        }

        await using var upsert = new NpgsqlCommand(UpsertReceipts, connection, transaction);
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Keys.Select(k => k.FleetId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Uuid });
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Keys.Select(k => k.VehicleId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Text });
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Keys.Select(k => k.Kind).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Smallint });
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Values.Select(v => v.ReceivedAt).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.TimestampTz });
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Values.Select(v => UnixMicroseconds.ToDateTimeUtc(v.TimeUs)).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.TimestampTz });
        await upsert.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
    }

    private static async Task InsertVehiclesAsync(
        NpgsqlConnection connection, NpgsqlTransaction transaction, List<MeasurementRow> rows, CancellationToken cancellationToken)
    {
        var vehicles = new HashSet<(Guid FleetId, string VehicleId)>();
        foreach (var row in rows)
        {
            vehicles.Add((row.FleetId, row.VehicleId));
        }

        await using var insert = new NpgsqlCommand(InsertVehiclesFromArrays, connection, transaction);
        insert.Parameters.Add(new NpgsqlParameter { Value = vehicles.Select(v => v.FleetId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Uuid });
        insert.Parameters.Add(new NpgsqlParameter { Value = vehicles.Select(v => v.VehicleId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Text });
        await insert.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
    }
}
