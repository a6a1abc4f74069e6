// The filter's verdicts written into the verdict arrays of the measurements' chunks.
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Writes the filter's verdicts on stored measurements into the verdict arrays of their chunks (migration 0013):
/// for each vehicle, the chunks its verdicts' time range can hold are read and locked (<c>FOR UPDATE</c>), the verdicts
/// set at their measurements' places, and every chunk that changed is updated once. Only the newest verdict of a
/// measurement is kept; a replay after late data overwrites what the first pass wrote.
/// </summary>
public static class MeasurementVerdictWriter
{
    // The chunks that can hold a time in [lo, hi] of each vehicle (a chunk spans at most 600 s), locked in key order. Their
    // keys are found first through the index on last_us (the lateral subquery's order makes it the cheaper plan; with the
    // primary key, first_us in a 600 s range, a gateway's van had every chunk of its last ten minutes read, as ingest's
    // stored-keys lookup did), materialised, and then the chunks read and locked by their full primary key, in key order
    // after the sort. (Joined without materialising, the planner may read every chunk of the vehicle and run the lookup
    // for each.)
    private const string ChunksSql = """
        WITH keys AS MATERIALIZED (
            SELECT r.f, r.v, k.first_us, k.chunk_id
            FROM unnest($1::uuid[], $2::text[], $3::bigint[], $4::bigint[]) AS r(f, v, lo, hi)
            CROSS JOIN LATERAL (
                SELECT c.first_us, c.chunk_id
                FROM measurement_chunks c
                WHERE c.fleet_id = r.f AND c.vehicle_id = r.v
                  AND c.first_us > r.lo - 600000000 AND c.first_us <= r.hi
                  AND c.last_us >= r.lo AND c.last_us < (r.hi / 600000000 + 1) * 600000000
                ORDER BY c.last_us) k)
        SELECT c.fleet_id, c.vehicle_id, c.first_us, c.chunk_id, c.count, array_send(c.time_us), array_send(c.kind),
               array_send(c.message_key), array_send(c.outcome), array_send(c.nis), array_send(c.track_reset),
               array_send(c.w0), array_send(c.w1)
        FROM keys
        JOIN measurement_chunks c ON c.fleet_id = keys.f AND c.vehicle_id = keys.v AND c.first_us = keys.first_us
             AND c.chunk_id = keys.chunk_id
        ORDER BY c.fleet_id, c.vehicle_id, c.first_us, c.chunk_id
        FOR UPDATE OF c
        """;

    // Every changed chunk in one statement: the new verdict arrays of all chunks are passed end to end in flat arrays,
    // and each chunk takes its slice [offset + 1, offset + count] (one plan, not one per chunk). The flat arrays hold no
    // nulls (NaN stands for a missing NIS or whitened component, turned back into null per slice): a slice of an array
    // with nulls must count the null bitmap from the start, which made the statement quadratic in its size.
    private const string UpdateSql = """
        UPDATE measurement_chunks c
        SET outcome = $5[u.offset_ + 1 : u.offset_ + u.count_],
            nis = array_replace($6[u.offset_ + 1 : u.offset_ + u.count_], 'NaN'::double precision, NULL),
            track_reset = $7[u.offset_ + 1 : u.offset_ + u.count_],
            w0 = array_replace($8[u.offset_ + 1 : u.offset_ + u.count_], 'NaN'::real, NULL),
            w1 = array_replace($9[u.offset_ + 1 : u.offset_ + u.count_], 'NaN'::real, NULL)
        FROM unnest($1::uuid[], $2::text[], $3::bigint[], $4::bigint[], $10::integer[], $11::integer[])
             AS u(fleet_id, vehicle_id, first_us, chunk_id, offset_, count_)
        WHERE c.fleet_id = u.fleet_id AND c.vehicle_id = u.vehicle_id AND c.first_us = u.first_us AND c.chunk_id = u.chunk_id
        """;

    /// <summary>
    /// Writes <paramref name="verdicts"/> (one transaction, atomic). Of several verdicts on one measurement in the list
    /// only the last counts, since it supersedes the others. A verdict whose measurement is not stored changes nothing.
    /// </summary>
    /// <param name="dataSource">Data source of the store's schema.</param>
    /// <param name="verdicts">Verdicts in the order they were made; their measurements must be stored.</param>
    /// <param name="cancellationToken">Cancels the statements.</param>
    /// <returns>Number of measurements whose verdict was written.</returns>
    public static async Task<int> WriteAsync(
        NpgsqlDataSource dataSource, IReadOnlyList<MeasurementOutcomeUpdate> verdicts, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        ArgumentNullException.ThrowIfNull(verdicts);
        var last = new Dictionary<MeasurementKey, MeasurementOutcomeUpdate>(verdicts.Count);
        var ranges = new Dictionary<(Guid FleetId, string VehicleId), (long Lo, long Hi)>();
        foreach (var verdict in verdicts)
        {
            var key = verdict.Key;
            last[key] = verdict;
            MeasurementChunks.Widen(ranges, key.FleetId, key.VehicleId, key.TimeUs);
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
                // The chunks are looked up by key, one vehicle or chunk at a time: this transaction keeps to the indexes.
                var planner = new NpgsqlCommand(MeasurementChunks.IndexLookupsSql, connection, transaction);
                await using (planner.ConfigureAwait(false))
                {
                    await planner.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                // A chunk that a fold (MeasurementChunkFolder) deleted while this read waited for its lock is skipped by
                // the read, and the folded chunk that now holds its measurements was not in the read's snapshot: the
                // verdicts still unplaced are looked up again by a new statement, which sees the folded chunk. A verdict
                // whose measurement is not stored stays unplaced; a second look that places nothing ends the search.
                var changed = new ChangedChunks();
                int written = 0;
                for (int pass = 0; pass < 3 && last.Count > 0; pass++)
                {
                    int placed = await PlaceAsync(connection, transaction, last, ranges, changed, cancellationToken).ConfigureAwait(false);
                    written += placed;
                    if (placed == 0 && pass > 0)
                    {
                        break;
                    }

                    ranges.Clear();
                    foreach (var key in last.Keys)
                    {
                        MeasurementChunks.Widen(ranges, key.FleetId, key.VehicleId, key.TimeUs);
                    }
                }

                if (changed.Count > 0)
                {
                    await changed.UpdateAsync(connection, transaction, cancellationToken).ConfigureAwait(false);
                }

                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return written;
            }
        }
    }

    // Reads and locks the chunks that can hold the verdicts of `last` (the ranges of its vehicles), sets each verdict found
    // at its measurement's place in `changed` and removes it from `last`; returns how many it placed.
    private static async Task<int> PlaceAsync(
        NpgsqlConnection connection,
        NpgsqlTransaction transaction,
        Dictionary<MeasurementKey, MeasurementOutcomeUpdate> last,
        Dictionary<(Guid FleetId, string VehicleId), (long Lo, long Hi)> ranges,
        ChangedChunks changed,
        CancellationToken cancellationToken)
    {
        var vehicles = ranges.Keys.ToArray();
        int placed = 0;
        var select = new NpgsqlCommand(ChunksSql, connection, transaction);
        await using (select.ConfigureAwait(false))
        {
            select.Parameters.Add(new NpgsqlParameter { Value = vehicles.Select(v => v.FleetId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Uuid });
            select.Parameters.Add(new NpgsqlParameter { Value = vehicles.Select(v => v.VehicleId).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Text });
            select.Parameters.Add(new NpgsqlParameter { Value = vehicles.Select(v => ranges[v].Lo).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Bigint });
            select.Parameters.Add(new NpgsqlParameter { Value = vehicles.Select(v => ranges[v].Hi).ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Bigint });
            var reader = await select.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            await using (reader.ConfigureAwait(false))
            {
                while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                {
                    var fleetId = reader.GetGuid(0);
                    var vehicleId = reader.GetString(1);
                    int n = reader.GetInt32(4);
                    var time = new long[n];
                    var kind = new short[n];
                    var messageKey = new long[n];
                    ArraySendDecoder.Int64(reader.GetFieldValue<byte[]>(5), time);
                    ArraySendDecoder.Int16(reader.GetFieldValue<byte[]>(6), kind);
                    ArraySendDecoder.Int64(reader.GetFieldValue<byte[]>(7), messageKey);
                    short[]? outcome = null;
                    double?[]? nis = null;
                    bool[]? reset = null;
                    float?[]? w0 = null;
                    float?[]? w1 = null;
                    for (int i = 0; i < n; i++)
                    {
                        var key = new MeasurementKey(fleetId, vehicleId, kind[i], time[i], messageKey[i]);
                        if (!last.TryGetValue(key, out var verdict))
                        {
                            continue;
                        }

                        if (outcome is null)
                        {
                            outcome = new short[n];
                            nis = new double?[n];
                            reset = new bool[n];
                            w0 = new float?[n];
                            w1 = new float?[n];
                            ArraySendDecoder.Int16(reader.GetFieldValue<byte[]>(8), outcome);
                            ArraySendDecoder.NullableFloat64(reader.GetFieldValue<byte[]>(9), nis);
                            ArraySendDecoder.Boolean(reader.GetFieldValue<byte[]>(10), reset);
                            ArraySendDecoder.NullableFloat32(reader.GetFieldValue<byte[]>(11), w0);
                            ArraySendDecoder.NullableFloat32(reader.GetFieldValue<byte[]>(12), w1);
                        }

                        outcome[i] = OutcomeCodes.ToCode(verdict.Outcome);
                        nis![i] = verdict.Nis;
                        reset![i] = verdict.TrackReset;
                        w0![i] = verdict.Whitened0;
                        w1![i] = verdict.Whitened1;
                        last.Remove(key);
                        placed++;
                    }

                    if (outcome is not null)
                    {
                        changed.Add(fleetId, vehicleId, reader.GetInt64(2), reader.GetInt64(3), outcome, nis!, reset!, w0!, w1!);
                    }
                }
            }
        }

        return placed;
    }

    // The chunks whose verdicts changed, their new verdict arrays end to end.
    private sealed class ChangedChunks
    {
        private readonly List<Guid> _fleetIds = [];
        private readonly List<string> _vehicleIds = [];
        private readonly List<long> _firstUs = [];
        private readonly List<long> _chunkIds = [];
        private readonly List<int> _offsets = [];
        private readonly List<int> _counts = [];
        private readonly List<short> _outcome = [];
        private readonly List<double> _nis = [];
        private readonly List<bool> _reset = [];
        private readonly List<float> _w0 = [];
        private readonly List<float> _w1 = [];

        public int Count => _chunkIds.Count;

        public void Add(Guid fleetId, string vehicleId, long firstUs, long chunkId, short[] outcome, double?[] nis, bool[] reset, float?[] w0, float?[] w1)
        {
            _fleetIds.Add(fleetId);
            _vehicleIds.Add(vehicleId);
            _firstUs.Add(firstUs);
            _chunkIds.Add(chunkId);
            _offsets.Add(_outcome.Count);
            _counts.Add(outcome.Length);
            _outcome.AddRange(outcome);
            foreach (var v in nis)
            {
                _nis.Add(v ?? double.NaN);
            }

            _reset.AddRange(reset);
            foreach (var v in w0)
            {
                _w0.Add(v ?? float.NaN);
            }

            foreach (var v in w1)
            {
                _w1.Add(v ?? float.NaN);
            }
        }

        public async Task UpdateAsync(NpgsqlConnection connection, NpgsqlTransaction transaction, CancellationToken cancellationToken)
        {
            var update = new NpgsqlCommand(UpdateSql, connection, transaction);
            await using (update.ConfigureAwait(false))
            {
                update.Parameters.Add(new NpgsqlParameter { Value = _fleetIds.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Uuid });
                update.Parameters.Add(new NpgsqlParameter { Value = _vehicleIds.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Text });
                update.Parameters.Add(new NpgsqlParameter { Value = _firstUs.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Bigint });
                update.Parameters.Add(new NpgsqlParameter { Value = _chunkIds.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Bigint });
                update.Parameters.Add(new NpgsqlParameter { Value = _outcome.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Smallint });
                update.Parameters.Add(new NpgsqlParameter { Value = _nis.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Double });
                update.Parameters.Add(new NpgsqlParameter { Value = _reset.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Boolean });
                update.Parameters.Add(new NpgsqlParameter { Value = _w0.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Real });
                update.Parameters.Add(new NpgsqlParameter { Value = _w1.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Real });
                update.Parameters.Add(new NpgsqlParameter { Value = _offsets.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Integer });
                update.Parameters.Add(new NpgsqlParameter { Value = _counts.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Integer });
                int updated = await update.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                if (updated != Count)
                {
                    throw new InvalidOperationException($"{Count} chunks were read and locked for their verdicts, but {updated} were updated");
                }
            }
        }
    }
}
