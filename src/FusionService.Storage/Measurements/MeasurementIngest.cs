// Idempotent bulk insert of measurements into per-vehicle chunks: keys already stored are left out.
using FusionService.Estimation.Time;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Stores measurements that may already be stored (client retries) and says which rows were new. The rows of each
/// vehicle are checked against the keys of the chunks their time range can touch (migration 0013: a chunk spans at most
/// one aligned ten-minute window), under a transaction-scoped advisory lock on the vehicle's bucket (<see cref="IngestBuckets"/>) so that
/// two commits of one vehicle cannot both store the same message; the new rows are then written as chunks with one binary COPY. The
/// vehicles the rows name are created when missing. Because the stored keys decide, duplicate detection survives
/// restarts of the service and works across the processes of a cluster.
/// </summary>
public static class MeasurementIngest
{
    // Vehicle inserts take their rows in one order (fleet, then the id's bytes) and come before the bucket locks, which are
    // taken in bucket order: two transactions that touch the same vehicles then wait for each other instead of each
    // holding one and waiting for the other (a deadlock).
    private const string InsertVehiclesFromArrays =
        "INSERT INTO vehicles (fleet_id, vehicle_id) SELECT f, v FROM unnest($1::uuid[], $2::text[]) AS u(f, v) "
        + "ORDER BY f, v COLLATE \"C\" ON CONFLICT DO NOTHING";

    // Transaction-scoped locks on the vehicles' buckets (IngestBuckets: 128 of them, so that a batch over thousands of vans
    // takes at most 128 locks; each advisory lock takes a slot of the server's shared lock table, max_locks_per_transaction
    // x connections: about 6,400 with the defaults). Taken in one global order; the volatile lock function runs after the
    // sort.
    private const string LockBuckets =
        "SELECT pg_advisory_xact_lock(h) FROM (SELECT DISTINCT hashtextextended('FusionService ingest buckets', 0) + b AS h "
        + "FROM unnest($1::integer[]) AS u(b)) AS k ORDER BY h";

    // The stored keys of each vehicle within [lo, hi] of measurement time: the chunks that can hold such a time are those
    // with last_us >= lo (index measurement_chunks_last) and first_us in (lo - 600 s, hi] (a chunk spans at most 600 s;
    // this bound prunes the daily partitions). The order by last_us makes the planner take that index: with the primary
    // key instead (first_us in a 600 s range) a gateway's van, one chunk per commit, had every chunk of its last ten
    // minutes read at each commit.
    private const string StoredKeys = """
        SELECT r.f, r.v, u.kind, u.time_us, u.message_key
        FROM unnest($1::uuid[], $2::text[], $3::bigint[], $4::bigint[]) AS r(f, v, lo, hi)
        CROSS JOIN LATERAL (
            SELECT c.time_us, c.kind, c.message_key
            FROM measurement_chunks c
            WHERE c.fleet_id = r.f AND c.vehicle_id = r.v
              AND c.first_us > r.lo - 600000000 AND c.first_us <= r.hi
              AND c.last_us >= r.lo AND c.last_us < (r.hi / 600000000 + 1) * 600000000
            ORDER BY c.last_us) c
        CROSS JOIN LATERAL unnest(c.time_us, c.kind, c.message_key) AS u(time_us, kind, message_key)
        WHERE u.time_us >= r.lo AND u.time_us <= r.hi
        """;

    // The newest receipt per vehicle and sensor kind (vehicle_receipts, read by the fleet list), in the order of the
    // vehicle inserts for the same reason; never moves a time backwards.
    private const string UpsertReceipts =
        "INSERT INTO vehicle_receipts AS r (fleet_id, vehicle_id, kind, last_received_at, last_measured_at) "
        + "SELECT f, v, k, rec, mea FROM unnest($1::uuid[], $2::text[], $3::smallint[], $4::timestamptz[], $5::timestamptz[]) AS u(f, v, k, rec, mea) "
        + "ORDER BY f, v COLLATE \"C\", k "
        + "ON CONFLICT (fleet_id, vehicle_id, kind) DO UPDATE SET last_received_at = GREATEST(r.last_received_at, EXCLUDED.last_received_at), "
        + "last_measured_at = GREATEST(r.last_measured_at, EXCLUDED.last_measured_at)";

    // The transaction's id, for the tracks' commit stamps (Measurements/CommitSnapshot); the same value wherever in the
    // transaction it is asked for.
    private const string TransactionIdColumn = "ingest_transaction_id";

    private const string TransactionIdSql = "SELECT pg_current_xact_id()::text::bigint AS " + TransactionIdColumn;

    /// <summary>
    /// Stores the rows not stored yet, inside <paramref name="transaction"/> (the caller commits), records the receipts,
    /// and returns the keys of the rows this call inserted with the transaction's id. Two rows with the same key in
    /// <paramref name="rows"/> insert once.
    /// </summary>
    /// <remarks>
    /// Four round trips to the server (six before): one batch (vehicles, bucket locks, the stored keys, the receipts and
    /// the transaction id), the binary COPY's start and end, and the caller's COMMIT. After each answer the process must
    /// be scheduled again before it sends the next statement; beside heavy history reads on a small machine that wait
    /// grew most of a commit's extra time (docs/limits-and-keys.md, "Where the time goes"), so the statements that need
    /// nothing from the stored keys go in the first batch. The receipts still take their row locks after the bucket
    /// locks, in vehicle order.
    /// </remarks>
    /// <param name="connection">An open connection whose <c>search_path</c> names the store's schema.</param>
    /// <param name="transaction">The connection's open transaction.</param>
    /// <param name="rows">Rows; the daily partition of each must exist and its fleet must exist.</param>
    /// <param name="cancellationToken">Cancels the statements.</param>
    /// <returns>Keys of the inserted rows (each once), and the PostgreSQL transaction id (<c>pg_current_xact_id()</c>).</returns>
    /// <exception cref="PostgresException">The server refused the rows (missing partition, violated check); nothing is stored.</exception>
    public static async Task<(HashSet<MeasurementKey> Inserted, long TransactionId)> InsertNewAsync(
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
            await using var command = new NpgsqlCommand(TransactionIdSql, connection, transaction);
            return (inserted, (long)(await command.ExecuteScalarAsync(cancellationToken).ConfigureAwait(false))!);
        }

        var unique = new List<MeasurementRow>(rows.Count);
        var ranges = new Dictionary<(Guid FleetId, string VehicleId), (long Lo, long Hi)>();
        foreach (var row in rows)
        {
            if (row.ReceivedAtUtc.Kind != DateTimeKind.Utc || string.IsNullOrEmpty(row.VehicleId))
            {
                throw new ArgumentException("Rows need a vehicle id and a UTC receive time.", nameof(rows));
            }

            if (inserted.Add(MeasurementKey.Of(row)))
            {
                unique.Add(row);
                MeasurementChunks.Widen(ranges, row.FleetId, row.VehicleId, row.TimeUs);
            }
        }

        var vehicles = ranges.Keys.ToArray();
        var fleets = vehicles.Select(v => v.FleetId).ToArray();
        var ids = vehicles.Select(v => v.VehicleId).ToArray();
        long transactionId = 0;
        var batch = new NpgsqlBatch(connection, transaction);
        await using (batch.ConfigureAwait(false))
        {
            batch.BatchCommands.Add(Command(InsertVehiclesFromArrays, Uuids(fleets), Texts(ids)));
            batch.BatchCommands.Add(Command(
                LockBuckets,
                new NpgsqlParameter { Value = vehicles.Select(v => IngestBuckets.Of(v.FleetId, v.VehicleId)).Distinct().ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Integer }));
            batch.BatchCommands.Add(Command(MeasurementChunks.IndexLookupsSql));
            batch.BatchCommands.Add(Command(
                StoredKeys,
                Uuids(fleets),
                Texts(ids),
                Bigints(vehicles.Select(v => ranges[v].Lo).ToArray()),
                Bigints(vehicles.Select(v => ranges[v].Hi).ToArray())));
            batch.BatchCommands.Add(ReceiptsCommand(rows));
            batch.BatchCommands.Add(Command(TransactionIdSql));
            var reader = await batch.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            await using (reader.ConfigureAwait(false))
            {
                // The stored keys are the only result with five columns (the lock statement returns one void column, the
                // planner settings three: the key lookup keeps to the indexes, as the verdict writer's does); the
                // transaction id is the one column named TransactionIdColumn.
                do
                {
                    if (reader.FieldCount == 1 && reader.GetName(0) == TransactionIdColumn && await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                    {
                        transactionId = reader.GetInt64(0);
                        continue;
                    }

                    if (reader.FieldCount != 5)
                    {
                        continue;
                    }

                    while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                    {
                        inserted.Remove(new MeasurementKey(
                            reader.GetGuid(0), reader.GetString(1), reader.GetInt16(2), reader.GetInt64(3), reader.GetInt64(4)));
                    }
                }
                while (await reader.NextResultAsync(cancellationToken).ConfigureAwait(false));
            }
        }

        if (transactionId == 0)
        {
            throw new InvalidOperationException("The ingest batch returned no transaction id.");
        }

        if (inserted.Count < unique.Count)
        {
            unique.RemoveAll(r => !inserted.Contains(MeasurementKey.Of(r)));
        }

        await MeasurementChunks.CopyAsync(connection, unique, cancellationToken).ConfigureAwait(false);
        return (inserted, transactionId);
    }

    private static NpgsqlBatchCommand Command(string sql, params NpgsqlParameter[] parameters)
    {
        var command = new NpgsqlBatchCommand(sql);
        command.Parameters.AddRange(parameters);
        return command;
    }

    private static NpgsqlParameter Uuids(Guid[] values) => new() { Value = values, NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Uuid };

    private static NpgsqlParameter Texts(string[] values) => new() { Value = values, NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Text };

    private static NpgsqlParameter Bigints(long[] values) => new() { Value = values, NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Bigint };

    // Every received row counts, a duplicate of a stored one too: the vehicle was heard from.
    private static NpgsqlBatchCommand ReceiptsCommand(IReadOnlyList<MeasurementRow> rows)
    {
        var newest = new Dictionary<(Guid FleetId, string VehicleId, short Kind), (DateTime ReceivedAt, long TimeUs)>();
        foreach (var row in rows)
        {
            var key = (row.FleetId, row.VehicleId, row.Kind);
            newest[key] = newest.TryGetValue(key, out var seen)
                ? (row.ReceivedAtUtc > seen.ReceivedAt ? row.ReceivedAtUtc : seen.ReceivedAt, Math.Max(seen.TimeUs, row.TimeUs))
                : (row.ReceivedAtUtc, row.TimeUs);
        }

        var upsert = new NpgsqlBatchCommand(UpsertReceipts);
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Keys.Select(k => k.FleetId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Uuid });
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Keys.Select(k => k.VehicleId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Text });
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Keys.Select(k => k.Kind).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Smallint });
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Values.Select(v => v.ReceivedAt).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.TimestampTz });
        upsert.Parameters.Add(new NpgsqlParameter { Value = newest.Values.Select(v => UnixMicroseconds.ToDateTimeUtc(v.TimeUs)).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.TimestampTz });
        return upsert;
    }
}
