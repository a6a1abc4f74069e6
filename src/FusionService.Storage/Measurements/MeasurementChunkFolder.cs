// A vehicle's small chunks of a closed ten-minute window folded into one chunk.
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Folds the chunks of a vehicle's ten-minute window into one chunk once the window is closed. Each commit writes one
/// chunk per vehicle and window, so a gateway whose batches carry one or two measurements of each of hundreds of vans
/// leaves hundreds of chunks of one or two measurements per van and window, each with its row header, thirteen array
/// headers and index entries: about 580 bytes per measurement instead of about 50 (docs/storage-cost.md). Folding
/// rewrites such a window as the single chunk one upload of the whole window would have written: the same measurements
/// and verdicts, in canonical order (time, kind, message key), in one transaction that deletes the old chunks and
/// inserts the new one, so every reader sees either the old chunks or the folded one.
/// </summary>
/// <remarks>
/// Only windows with at least two chunks that hold fewer than <see cref="MeanCountBelow"/> measurements on average are
/// folded: a van's tracker uploading its buffer already writes chunks of hundreds. The work stays in the server (the
/// arrays are unnested and aggregated in SQL; nothing crosses the wire). A verdict writer that waited for a folded
/// chunk's lock finds the chunk deleted and looks again (<see cref="MeasurementVerdictWriter"/>); one fold runs at a time
/// across the processes of a cluster (a transaction-scoped advisory lock; a process that does not get it folds later).
/// </remarks>
public static class MeasurementChunkFolder
{
    /// <summary>A window whose chunks hold this many measurements or more on average is left as it is.</summary>
    public const int MeanCountBelow = 100;

    private const string TryLockSql = "SELECT pg_try_advisory_xact_lock(hashtextextended('FusionService chunk fold', 0))";

    // The windows that qualify; their chunks locked in the verdict writer's order (fleet, vehicle, first_us, chunk_id), so
    // that the two never wait for each other crosswise; then every chunk of each deleted and the folded chunk inserted, in
    // one statement (one snapshot: a chunk committed after it started is neither deleted nor folded in, and stays a chunk
    // of its own). Windows that do not qualify (a van's own uploads) are not locked.
    private const string FoldSql = """
        WITH candidates AS (
            SELECT c.fleet_id, c.vehicle_id, w.n
            FROM unnest($1::uuid[], $2::text[], $3::bigint[]) AS w(f, v, n)
            JOIN measurement_chunks c ON c.fleet_id = w.f AND c.vehicle_id = w.v
                 AND c.first_us >= w.n * 600000000 AND c.first_us < (w.n + 1) * 600000000
            GROUP BY c.fleet_id, c.vehicle_id, w.n
            HAVING count(*) >= 2 AND sum(c.count) < $4 * count(*)),
        locked AS MATERIALIZED (
            SELECT c.fleet_id, c.vehicle_id, p.n
            FROM candidates p
            JOIN measurement_chunks c ON c.fleet_id = p.fleet_id AND c.vehicle_id = p.vehicle_id
                 AND c.first_us >= p.n * 600000000 AND c.first_us < (p.n + 1) * 600000000
            ORDER BY c.fleet_id, c.vehicle_id, c.first_us, c.chunk_id
            FOR UPDATE OF c),
        picked AS (SELECT DISTINCT fleet_id, vehicle_id, n FROM locked),
        old AS (
            DELETE FROM measurement_chunks c
            USING picked p
            WHERE c.fleet_id = p.fleet_id AND c.vehicle_id = p.vehicle_id
              AND c.first_us >= p.n * 600000000 AND c.first_us < (p.n + 1) * 600000000
            RETURNING c.*),
        flat AS (
            SELECT o.fleet_id, o.vehicle_id, o.first_us / 600000000 AS n, u.*
            FROM old o
            CROSS JOIN LATERAL unnest(o.time_us, o.kind, o.message_key, o.received_us, o.v0, o.v1, o.v2, o.flags,
                                      o.outcome, o.nis, o.track_reset, o.w0, o.w1)
                 AS u(t, k, mk, rc, a0, a1, a2, fl, oc, ni, tr, x0, x1)),
        folded AS (
            INSERT INTO measurement_chunks (fleet_id, vehicle_id, first_us, last_us, count, time_us, kind, message_key,
                                            received_us, v0, v1, v2, flags, outcome, nis, track_reset, w0, w1)
            SELECT fleet_id, vehicle_id, min(t), max(t), count(*),
                   array_agg(t ORDER BY t, k, mk), array_agg(k ORDER BY t, k, mk), array_agg(mk ORDER BY t, k, mk),
                   array_agg(rc ORDER BY t, k, mk), array_agg(a0 ORDER BY t, k, mk), array_agg(a1 ORDER BY t, k, mk),
                   array_agg(a2 ORDER BY t, k, mk), array_agg(fl ORDER BY t, k, mk), array_agg(oc ORDER BY t, k, mk),
                   array_agg(ni ORDER BY t, k, mk), array_agg(tr ORDER BY t, k, mk), array_agg(x0 ORDER BY t, k, mk),
                   array_agg(x1 ORDER BY t, k, mk)
            FROM flat
            GROUP BY fleet_id, vehicle_id, n
            RETURNING count)
        SELECT (SELECT count(*) FROM old), count(*), coalesce(sum(count), 0) FROM folded
        """;

    /// <summary>
    /// Folds each of <paramref name="windows"/> that qualifies (see the remarks of <see cref="MeasurementChunkFolder"/>).
    /// </summary>
    /// <param name="dataSource">Data source of the store's schema.</param>
    /// <param name="windows">Vehicles and window numbers (floor(time / 600 s), <see cref="MeasurementChunks.WindowOf"/>).</param>
    /// <param name="cancellationToken">Cancels the statements.</param>
    /// <returns>
    /// The chunks deleted, the chunks written and the measurements they hold; null when another fold held the lock and
    /// nothing was done.
    /// </returns>
    public static async Task<ChunkFoldResult?> FoldAsync(
        NpgsqlDataSource dataSource, IReadOnlyCollection<(Guid FleetId, string VehicleId, long Window)> windows, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        ArgumentNullException.ThrowIfNull(windows);
        if (windows.Count == 0)
        {
            return new ChunkFoldResult(0, 0, 0);
        }

        var connection = await dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                var tryLock = new NpgsqlCommand(TryLockSql, connection, transaction);
                await using (tryLock.ConfigureAwait(false))
                {
                    if (!(bool)(await tryLock.ExecuteScalarAsync(cancellationToken).ConfigureAwait(false))!)
                    {
                        return null;
                    }
                }

                var planner = new NpgsqlCommand(MeasurementChunks.IndexLookupsSql, connection, transaction);
                await using (planner.ConfigureAwait(false))
                {
                    await planner.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                ChunkFoldResult result;
                var fold = FoldCommand(connection, transaction, windows);
                await using (fold.ConfigureAwait(false))
                {
                    var reader = await fold.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
                    await using (reader.ConfigureAwait(false))
                    {
                        await reader.ReadAsync(cancellationToken).ConfigureAwait(false);
                        result = new ChunkFoldResult(reader.GetInt64(0), reader.GetInt64(1), reader.GetInt64(2));
                    }
                }

                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return result;
            }
        }
    }

    /// <summary>The fold of <paramref name="windows"/> as one statement (its result: chunks deleted, written, measurements).</summary>
    internal static NpgsqlCommand FoldCommand(
        NpgsqlConnection connection, NpgsqlTransaction transaction, IReadOnlyCollection<(Guid FleetId, string VehicleId, long Window)> windows)
    {
        var fold = new NpgsqlCommand(FoldSql, connection, transaction);
        fold.Parameters.Add(new NpgsqlParameter { Value = windows.Select(w => w.FleetId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Uuid });
        fold.Parameters.Add(new NpgsqlParameter { Value = windows.Select(w => w.VehicleId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Text });
        fold.Parameters.Add(new NpgsqlParameter { Value = windows.Select(w => w.Window).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Bigint });
        fold.Parameters.Add(new NpgsqlParameter { Value = (long)MeanCountBelow, NpgsqlDbType = NpgsqlDbType.Bigint });
        return fold;
    }
}
