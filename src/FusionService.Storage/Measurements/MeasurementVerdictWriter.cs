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
    // The chunks that can hold a time in [lo, hi] of each vehicle (a chunk spans at most 600 s), locked in key order.
    private const string ChunksSql = """
        SELECT c.fleet_id, c.vehicle_id, c.first_us, c.chunk_id, c.count, array_send(c.time_us), array_send(c.kind),
               array_send(c.message_key), array_send(c.outcome), array_send(c.nis), array_send(c.track_reset),
               array_send(c.w0), array_send(c.w1)
        FROM unnest($1::uuid[], $2::text[], $3::bigint[], $4::bigint[]) AS r(f, v, lo, hi)
        JOIN measurement_chunks c ON c.fleet_id = r.f AND c.vehicle_id = r.v
             AND c.first_us > r.lo - 600000000 AND c.first_us <= r.hi AND c.last_us >= r.lo
        ORDER BY c.fleet_id, c.vehicle_id, c.first_us, c.chunk_id
        FOR UPDATE OF c
        """;

    private const string UpdateSql =
        "UPDATE measurement_chunks SET outcome = $5, nis = $6, track_reset = $7, w0 = $8, w1 = $9 "
        + "WHERE fleet_id = $1 AND vehicle_id = $2 AND first_us = $3 AND chunk_id = $4";

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
            var vehicle = (key.FleetId, key.VehicleId);
            ranges[vehicle] = ranges.TryGetValue(vehicle, out var r)
                ? (Math.Min(r.Lo, key.TimeUs), Math.Max(r.Hi, key.TimeUs))
                : (key.TimeUs, key.TimeUs);
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
                var vehicles = ranges.Keys.ToArray();
                var batch = new NpgsqlBatch(connection, transaction);
                int written = 0;
                await using (batch.ConfigureAwait(false))
                {
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
                                    if (!last.TryGetValue(new MeasurementKey(fleetId, vehicleId, kind[i], time[i], messageKey[i]), out var verdict))
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
                                    written++;
                                }

                                if (outcome is not null)
                                {
                                    var update = new NpgsqlBatchCommand(UpdateSql);
                                    update.Parameters.Add(new NpgsqlParameter { Value = fleetId, NpgsqlDbType = NpgsqlDbType.Uuid });
                                    update.Parameters.Add(new NpgsqlParameter { Value = vehicleId, NpgsqlDbType = NpgsqlDbType.Text });
                                    update.Parameters.Add(new NpgsqlParameter { Value = reader.GetInt64(2), NpgsqlDbType = NpgsqlDbType.Bigint });
                                    update.Parameters.Add(new NpgsqlParameter { Value = reader.GetInt64(3), NpgsqlDbType = NpgsqlDbType.Bigint });
                                    update.Parameters.Add(new NpgsqlParameter { Value = outcome, NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Smallint });
                                    update.Parameters.Add(new NpgsqlParameter { Value = nis, NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Double });
                                    update.Parameters.Add(new NpgsqlParameter { Value = reset, NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Boolean });
                                    update.Parameters.Add(new NpgsqlParameter { Value = w0, NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Real });
                                    update.Parameters.Add(new NpgsqlParameter { Value = w1, NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Real });
                                    batch.BatchCommands.Add(update);
                                }
                            }
                        }
                    }

                    if (batch.BatchCommands.Count > 0)
                    {
                        await batch.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                    }
                }

                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return written;
            }
        }
    }
}
