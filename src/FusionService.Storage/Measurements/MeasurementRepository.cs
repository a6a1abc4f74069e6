// Reads of the measurement log.
using Dapper;
using FusionService.Storage.Time;
using Npgsql;

namespace FusionService.Storage.Measurements;

/// <summary>Queries on the stored measurements, each with its newest verdict (<c>judged_measurements</c>, migration 0013).</summary>
/// <param name="dataSource">Data source whose connections have the store's schema on their search path
/// (see <see cref="Schemas.StorageSchema.WithSearchPath"/>).</param>
public sealed class MeasurementRepository(NpgsqlDataSource dataSource)
{
    private const string RangeSql = """
        SELECT fleet_id AS FleetId, vehicle_id AS VehicleId, kind AS Kind, time_us AS TimeUs,
               message_key AS MessageKey, received_at AS ReceivedAtUtc, v0 AS V0, v1 AS V1, v2 AS V2,
               flags AS Flags, outcome AS Outcome, nis AS Nis, track_reset AS TrackReset
        FROM judged_measurements(@FleetId, @VehicleId, @FromUs, @ToUs, @FromAt, @ToAt)
        ORDER BY time_us, kind, message_key
        """;

    // Stored rows among the given keys whose verdict is still pending: each key looked up in the chunks of its instant.
    private const string PendingSql = """
        SELECT k.fleet_id, k.vehicle_id, k.kind, k.time_us, k.message_key
        FROM unnest($1::uuid[], $2::text[], $3::smallint[], $4::bigint[], $5::bigint[])
             AS k(fleet_id, vehicle_id, kind, time_us, message_key)
        WHERE EXISTS (
            SELECT 1 FROM judged_measurements(k.fleet_id, k.vehicle_id, k.time_us, k.time_us + 1, NULL, NULL) j
            WHERE j.kind = k.kind AND j.message_key = k.message_key AND j.outcome = 4)
        """;

    // One vehicle's stored rows in a time range that no verdict has judged yet.
    private const string PendingRangeSql = """
        SELECT fleet_id AS FleetId, vehicle_id AS VehicleId, kind AS Kind, time_us AS TimeUs,
               message_key AS MessageKey, received_at AS ReceivedAtUtc, v0 AS V0, v1 AS V1, v2 AS V2,
               flags AS Flags, outcome AS Outcome, nis AS Nis, track_reset AS TrackReset
        FROM judged_measurements(@FleetId, @VehicleId, @FromUs, @ToUs, @FromAt, @ToAt)
        WHERE outcome = 4
        ORDER BY time_us, kind, message_key
        """;

    private readonly NpgsqlDataSource _dataSource = dataSource ?? throw new ArgumentNullException(nameof(dataSource));

    /// <summary>
    /// Measurements of one vehicle with <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/>,
    /// ordered by time, then kind, then message key.
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    /// <returns>The rows, <see cref="MeasurementRow.ReceivedAtUtc"/> with Kind=Utc.</returns>
    public Task<IReadOnlyList<MeasurementRow>> ReadAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default)
        => ReadRangeAsync(RangeSql, fleetId, vehicleId, fromUs, toUs, cancellationToken);

    /// <summary>
    /// <see cref="ReadAsync"/> in a read-only repeatable-read transaction, with the snapshot it read under: the commits
    /// the rows came from are exactly those the snapshot <see cref="CommitSnapshot.Holds"/>.
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public Task<(IReadOnlyList<MeasurementRow> Rows, CommitSnapshot Snapshot)> ReadWithSnapshotAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default) =>
        ReadUnderSnapshotAsync(RangeSql, fleetId, vehicleId, fromUs, toUs, cancellationToken);

    /// <summary>
    /// <see cref="ReadPendingAsync"/> under a snapshot, as <see cref="ReadWithSnapshotAsync"/>: every commit the snapshot
    /// holds has each of its rows in the range either judged already or among the rows returned.
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public Task<(IReadOnlyList<MeasurementRow> Rows, CommitSnapshot Snapshot)> ReadPendingWithSnapshotAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default) =>
        ReadUnderSnapshotAsync(PendingRangeSql, fleetId, vehicleId, fromUs, toUs, cancellationToken);

    private async Task<(IReadOnlyList<MeasurementRow> Rows, CommitSnapshot Snapshot)> ReadUnderSnapshotAsync(
        string sql, Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(System.Data.IsolationLevel.RepeatableRead, cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                // The first statement of a repeatable-read transaction fixes its snapshot; the range read uses the same one.
                string text = await connection.ExecuteScalarAsync<string>(
                    new CommandDefinition("SELECT pg_current_snapshot()::text", transaction: transaction, cancellationToken: cancellationToken)).ConfigureAwait(false)
                    ?? throw new InvalidOperationException("pg_current_snapshot() returned nothing");
                IReadOnlyList<MeasurementRow> rows = [];
                if (toUs > fromUs)
                {
                    rows = (await connection.QueryAsync<MeasurementRow>(new CommandDefinition(
                        sql, TimeRangeParameters.For(fleetId, vehicleId, fromUs, toUs), transaction, cancellationToken: cancellationToken)).ConfigureAwait(false)).AsList();
                }

                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return (rows, CommitSnapshot.Parse(text));
            }
        }
    }

    /// <summary>
    /// Measurements of one vehicle with <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/> that no
    /// verdict has judged yet (outcome pending), in canonical order: stored by a commit whose delivery to the track was
    /// lost (a process killed between its commit and the track's verdicts).
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public Task<IReadOnlyList<MeasurementRow>> ReadPendingAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default)
        => ReadRangeAsync(PendingRangeSql, fleetId, vehicleId, fromUs, toUs, cancellationToken);

    private async Task<IReadOnlyList<MeasurementRow>> ReadRangeAsync(
        string sql, Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        if (toUs <= fromUs)
        {
            return [];
        }

        var parameters = TimeRangeParameters.For(fleetId, vehicleId, fromUs, toUs);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<MeasurementRow>(
                new CommandDefinition(sql, parameters, cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList();
        }
    }

    /// <summary>
    /// The keys among <paramref name="keys"/> whose stored measurement has no verdict yet (outcome pending): stored
    /// by a commit whose delivery to the track was lost (for example a COMMIT that reached the server while the
    /// client saw it fail, and was then resent as a duplicate).
    /// </summary>
    /// <param name="keys">Keys of stored measurements (any fleet or vehicle).</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    /// <returns>The pending ones among them.</returns>
    public async Task<HashSet<MeasurementKey>> PendingAmongAsync(IReadOnlyCollection<MeasurementKey> keys, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(keys);
        var pending = new HashSet<MeasurementKey>();
        if (keys.Count == 0)
        {
            return pending;
        }

        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(PendingSql, connection);
            command.Parameters.Add(new NpgsqlParameter { Value = keys.Select(k => k.FleetId).ToArray() });
            command.Parameters.Add(new NpgsqlParameter { Value = keys.Select(k => k.VehicleId).ToArray() });
            command.Parameters.Add(new NpgsqlParameter { Value = keys.Select(k => k.Kind).ToArray() });
            command.Parameters.Add(new NpgsqlParameter { Value = keys.Select(k => k.TimeUs).ToArray() });
            command.Parameters.Add(new NpgsqlParameter { Value = keys.Select(k => k.MessageKey).ToArray() });
            var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            await using (reader.ConfigureAwait(false))
            {
                while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                {
                    pending.Add(new MeasurementKey(reader.GetGuid(0), reader.GetString(1), reader.GetInt16(2), reader.GetInt64(3), reader.GetInt64(4)));
                }
            }
        }

        return pending;
    }
}
