// Alerts: idempotent raise/update/resolve with their webhook outbox rows, listing and acknowledgement.
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Alerts;

/// <summary>
/// Reads and writes <c>alerts</c>. <see cref="ApplyAsync"/> writes alert changes and, in the same transaction, one
/// <c>webhook_outbox</c> row per webhook subscription of the fleet for every alert that opens or resolves, so the
/// dispatcher can never miss an alert that was committed.
/// </summary>
public sealed class AlertRepository
{
    private const string Columns =
        "alert_id, fleet_id, vehicle_id, kind, severity, state, started_at, ended_at, last_seen_at, count, summary, details::text, updated_at, acknowledged_at, acknowledged_by_key_id, acknowledged_by_label";

    private const string RankSql = "(CASE severity WHEN 'critical' THEN 3 WHEN 'warning' THEN 2 WHEN 'info' THEN 1 ELSE 0 END)";

    // A page of at most 1000 plus one row that tells the caller whether another page follows.
    private const int MaxRows = 1001;

    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the repository.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public AlertRepository(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
    }

    /// <summary>
    /// Applies <paramref name="observations"/> of one vehicle in one transaction. For each: a raise updates the unresolved
    /// alert of that kind (count and last-seen time only ever grow; equal or older values change nothing) or inserts one,
    /// unless a resolved alert of the kind already ended at or after the observation's start (the same episode seen again
    /// when a track re-processes stored data); a resolve closes the unresolved alert (no-op without one). Inserted and
    /// resolved alerts get one outbox row per webhook of the fleet, with <paramref name="payloadOf"/> as body.
    /// </summary>
    /// <param name="fleetId">Fleet.</param>
    /// <param name="vehicleId">Vehicle (null for a fleet-wide alert).</param>
    /// <param name="observations">At most one per kind is expected; several are applied in order.</param>
    /// <param name="payloadOf">The webhook body for a stored alert (the API's alert JSON).</param>
    /// <param name="cancellationToken">Cancels the transaction.</param>
    public async Task<AlertApplyResult> ApplyAsync(
        Guid fleetId, string? vehicleId, IReadOnlyList<AlertObservation> observations, Func<AlertRow, string> payloadOf, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(observations);
        ArgumentNullException.ThrowIfNull(payloadOf);
        var changed = new List<AlertRow>();
        int deliveries = 0;
        if (observations.Count == 0)
        {
            return new AlertApplyResult(changed, 0);
        }

        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var tx = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (tx.ConfigureAwait(false))
            {
                foreach (var o in observations)
                {
                    var current = await ReadOneAsync(
                        connection,
                        "SELECT " + Columns + " FROM alerts WHERE fleet_id = $1 AND vehicle_id IS NOT DISTINCT FROM $2 AND kind = $3 AND state <> 'resolved' FOR UPDATE",
                        [fleetId, (object?)vehicleId ?? DBNull.Value, o.Kind],
                        cancellationToken).ConfigureAwait(false);
                    AlertRow? row = null;
                    bool notify = false;
                    if (o.Resolve)
                    {
                        if (current is null)
                        {
                            continue;
                        }

                        var last = Max(current.LastSeenAt ?? current.StartedAt, o.LastSeenAt);
                        row = await ReadOneAsync(
                            connection,
                            "UPDATE alerts SET state = 'resolved', ended_at = GREATEST(started_at, $2), last_seen_at = GREATEST(started_at, $2), "
                            + "count = GREATEST(count, $3), updated_at = now() WHERE alert_id = $1 RETURNING " + Columns,
                            [current.AlertId, last, Math.Max(current.Count, o.Count)],
                            cancellationToken).ConfigureAwait(false);
                        notify = true;
                    }
                    else if (current is not null)
                    {
                        bool grows = o.Count > current.Count || o.LastSeenAt > (current.LastSeenAt ?? DateTimeOffset.MinValue);
                        if (!grows)
                        {
                            continue;
                        }

                        row = await ReadOneAsync(
                            connection,
                            "UPDATE alerts SET count = GREATEST(count, $2), last_seen_at = GREATEST(last_seen_at, $3), summary = $4, details = $5, "
                            + "updated_at = now() WHERE alert_id = $1 RETURNING " + Columns,
                            [current.AlertId, o.Count, o.LastSeenAt, o.Summary, new NpgsqlParameter { Value = o.DetailsJson, NpgsqlDbType = NpgsqlDbType.Jsonb }],
                            cancellationToken).ConfigureAwait(false);
                    }
                    else
                    {
                        var seenBefore = await ReadOneAsync(
                            connection,
                            "SELECT " + Columns + " FROM alerts WHERE fleet_id = $1 AND vehicle_id IS NOT DISTINCT FROM $2 AND kind = $3 AND state = 'resolved' "
                            + "AND ended_at >= $4 LIMIT 1",
                            [fleetId, (object?)vehicleId ?? DBNull.Value, o.Kind, o.StartedAt],
                            cancellationToken).ConfigureAwait(false);
                        if (seenBefore is not null)
                        {
                            continue;
                        }

                        row = await ReadOneAsync(
                            connection,
                            "INSERT INTO alerts (alert_id, fleet_id, vehicle_id, kind, severity, state, started_at, last_seen_at, count, summary, details) "
                            + "VALUES ($1, $2, $3, $4, $5, 'open', $6, $7, $8, $9, $10) RETURNING " + Columns,
                            [Guid.CreateVersion7(), fleetId, (object?)vehicleId ?? DBNull.Value, o.Kind, o.Severity, o.StartedAt, Max(o.StartedAt, o.LastSeenAt),
                                Math.Max(1, o.Count), o.Summary, new NpgsqlParameter { Value = o.DetailsJson, NpgsqlDbType = NpgsqlDbType.Jsonb }],
                            cancellationToken).ConfigureAwait(false);
                        notify = true;
                    }

                    if (row is null)
                    {
                        continue;
                    }

                    changed.Add(row);
                    if (notify)
                    {
                        deliveries += await EnqueueAsync(connection, row, payloadOf(row), cancellationToken).ConfigureAwait(false);
                    }
                }

                await tx.CommitAsync(cancellationToken).ConfigureAwait(false);
            }
        }

        return new AlertApplyResult(changed, deliveries);
    }

    /// <summary>Alerts of <paramref name="query"/>'s fleet matching its filters, newest start first (or severity first).</summary>
    public async Task<IReadOnlyList<AlertRow>> ListAsync(AlertQuery query, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(query);
        string order = query.SeverityFirst ? RankSql + " DESC, started_at DESC, alert_id DESC" : "started_at DESC, alert_id DESC";
        string after = query.SeverityFirst
            ? "AND ($8::int IS NULL OR (" + RankSql + ", started_at, alert_id) < ($8, $9, $10)) "
            : "AND ($8::int IS NULL OR (started_at, alert_id) < ($9, $10)) ";
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "SELECT " + Columns + " FROM alerts WHERE fleet_id = $1 "
                + "AND ($2::text IS NULL OR state = $2 OR ($2 = 'unresolved' AND state <> 'resolved')) AND ($3::text IS NULL OR vehicle_id = $3) "
                + "AND ($4::text IS NULL OR kind = $4) AND ($5::timestamptz IS NULL OR ended_at IS NULL OR ended_at >= $5) "
                + "AND ($6::timestamptz IS NULL OR started_at <= $6) " + after + "ORDER BY " + order + " LIMIT $7",
                connection);
            command.Parameters.Add(new NpgsqlParameter { Value = query.FleetId });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.State ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Text });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.VehicleId ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Text });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.Kind ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Text });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.From ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.TimestampTz });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.To ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.TimestampTz });
            command.Parameters.Add(new NpgsqlParameter { Value = Math.Clamp(query.Limit, 1, MaxRows) });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.After?.SeverityRank ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Integer });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.After?.StartedAt ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.TimestampTz });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.After?.AlertId ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Uuid });
            return await ReadAllAsync(command, cancellationToken).ConfigureAwait(false);
        }
    }

    /// <summary>The rank of a severity in the severity-first order: 3 critical, 2 warning, 1 info (0 for anything else).</summary>
    public static int SeverityRank(string severity) => severity switch
    {
        "critical" => 3,
        "warning" => 2,
        "info" => 1,
        _ => 0,
    };

    /// <summary>The alert <paramref name="alertId"/> of <paramref name="fleetId"/>, or null (also for another fleet's alert).</summary>
    public async Task<AlertRow?> GetAsync(Guid fleetId, Guid alertId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await ReadOneAsync(connection, "SELECT " + Columns + " FROM alerts WHERE fleet_id = $1 AND alert_id = $2", [fleetId, alertId], cancellationToken).ConfigureAwait(false);
        }
    }

    /// <summary>
    /// Marks an open alert acknowledged by the API key <paramref name="keyId"/> (its id and current label are stored with
    /// the time); an acknowledged or resolved alert is returned unchanged. Null when the fleet has no such alert.
    /// </summary>
    public async Task<AlertRow?> AcknowledgeAsync(Guid fleetId, Guid alertId, Guid keyId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await ReadOneAsync(
                connection,
                "UPDATE alerts SET state = 'acknowledged', updated_at = now(), acknowledged_at = now(), acknowledged_by_key_id = $3, "
                + "acknowledged_by_label = (SELECT label FROM api_keys WHERE key_id = $3) "
                + "WHERE fleet_id = $1 AND alert_id = $2 AND state = 'open' RETURNING " + Columns,
                [fleetId, alertId, keyId],
                cancellationToken).ConfigureAwait(false);
        }
    }

    /// <summary>The newest receipt time of every vehicle that sent anything since <paramref name="since"/>.</summary>
    public async Task<IReadOnlyList<VehicleReceipt>> NewestReceiptsAsync(DateTimeOffset since, CancellationToken cancellationToken = default)
    {
        var list = new List<VehicleReceipt>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "SELECT fleet_id, vehicle_id, max(last_received_at) FROM vehicle_receipts WHERE last_received_at >= $1 GROUP BY fleet_id, vehicle_id",
                connection);
            command.Parameters.Add(new NpgsqlParameter { Value = since });
            await using var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
            {
                list.Add(new VehicleReceipt(reader.GetGuid(0), reader.GetString(1), reader.GetFieldValue<DateTimeOffset>(2)));
            }
        }

        return list;
    }

    private static DateTimeOffset Max(DateTimeOffset a, DateTimeOffset b) => a >= b ? a : b;

    private static async Task<int> EnqueueAsync(NpgsqlConnection connection, AlertRow row, string payload, CancellationToken cancellationToken)
    {
        await using var command = new NpgsqlCommand(
            "INSERT INTO webhook_outbox (delivery_id, webhook_id, fleet_id, alert_id, payload) "
            + "SELECT gen_random_uuid(), webhook_id, fleet_id, $2, $3 FROM webhooks WHERE fleet_id = $1",
            connection);
        command.Parameters.Add(new NpgsqlParameter { Value = row.FleetId });
        command.Parameters.Add(new NpgsqlParameter { Value = row.AlertId });
        command.Parameters.Add(new NpgsqlParameter { Value = payload });
        return await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
    }

    private static async Task<AlertRow?> ReadOneAsync(NpgsqlConnection connection, string sql, object[] parameters, CancellationToken cancellationToken)
    {
        await using var command = new NpgsqlCommand(sql, connection);
        foreach (var p in parameters)
        {
            command.Parameters.Add(p as NpgsqlParameter ?? new NpgsqlParameter { Value = p });
        }

        var rows = await ReadAllAsync(command, cancellationToken).ConfigureAwait(false);
        return rows.Count == 0 ? null : rows[0];
    }

    private static async Task<IReadOnlyList<AlertRow>> ReadAllAsync(NpgsqlCommand command, CancellationToken cancellationToken)
    {
        var list = new List<AlertRow>();
        await using var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
        while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
        {
            list.Add(new AlertRow(
                reader.GetGuid(0),
                reader.GetGuid(1),
                reader.IsDBNull(2) ? null : reader.GetString(2),
                reader.GetString(3),
                reader.GetString(4),
                reader.GetString(5),
                reader.GetFieldValue<DateTimeOffset>(6),
                reader.IsDBNull(7) ? null : reader.GetFieldValue<DateTimeOffset>(7),
                reader.IsDBNull(8) ? null : reader.GetFieldValue<DateTimeOffset>(8),
                reader.GetInt32(9),
                reader.GetString(10),
                reader.GetString(11),
                reader.GetFieldValue<DateTimeOffset>(12),
                reader.IsDBNull(13) ? null : reader.GetFieldValue<DateTimeOffset>(13),
                reader.IsDBNull(14) ? null : reader.GetGuid(14),
                reader.IsDBNull(15) ? null : reader.GetString(15)));
        }

        return list;
    }
}
