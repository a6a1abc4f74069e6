// The durable webhook outbox: claim due rows, mark delivered, reschedule, dead-letter, re-queue, purge.
using Npgsql;

namespace FusionService.Storage.Alerts;

/// <summary>
/// Claims and settles <c>webhook_outbox</c> rows. A claim (<c>FOR UPDATE SKIP LOCKED</c>, so several dispatchers
/// never take the same row) moves each row's <c>next_attempt_at</c> forward by a lease; if the dispatcher dies while
/// sending, the row becomes due again when the lease runs out, so every committed delivery is eventually attempted.
/// A row whose last allowed attempt failed is dead-lettered (never claimed) until <see cref="RequeueDeadLettersAsync"/>.
/// </summary>
public sealed class WebhookOutbox
{
    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the outbox.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public WebhookOutbox(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
    }

    /// <summary>
    /// Claims up to <paramref name="limit"/> pending rows due now, oldest due first, leasing them for <paramref name="lease"/>;
    /// rows of the subscriptions in <paramref name="skipWebhooks"/> (open circuit breakers, busy endpoints) are left alone.
    /// </summary>
    public async Task<IReadOnlyList<OutboxDelivery>> ClaimDueAsync(
        int limit, TimeSpan lease, IReadOnlyCollection<Guid>? skipWebhooks = null, CancellationToken cancellationToken = default)
    {
        var list = new List<OutboxDelivery>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "WITH due AS (SELECT o.delivery_id FROM webhook_outbox o JOIN webhooks w ON w.webhook_id = o.webhook_id "
                + "WHERE o.delivered_at IS NULL AND o.dead_lettered_at IS NULL AND o.next_attempt_at <= now() "
                + "AND w.secret_protected IS NOT NULL AND o.webhook_id <> ALL($3) "
                + "ORDER BY o.next_attempt_at LIMIT $1 FOR UPDATE OF o SKIP LOCKED) "
                + "UPDATE webhook_outbox o SET next_attempt_at = now() + $2 FROM due, webhooks w "
                + "WHERE o.delivery_id = due.delivery_id AND w.webhook_id = o.webhook_id "
                + "RETURNING o.delivery_id, o.webhook_id, o.alert_id, w.url, w.secret_protected, o.payload, o.attempts, o.created_at",
                connection);
            command.Parameters.Add(new NpgsqlParameter { Value = limit });
            command.Parameters.Add(new NpgsqlParameter { Value = lease });
            command.Parameters.Add(new NpgsqlParameter { Value = (skipWebhooks ?? []).ToArray() });
            await using var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
            {
                list.Add(new OutboxDelivery(
                    reader.GetGuid(0), reader.GetGuid(1), reader.GetGuid(2), reader.GetString(3), reader.GetString(4), reader.GetString(5), reader.GetInt32(6),
                    reader.GetFieldValue<DateTimeOffset>(7)));
            }
        }

        return list;
    }

    /// <summary>Records a successful attempt.</summary>
    public Task MarkDeliveredAsync(Guid deliveryId, CancellationToken cancellationToken = default) =>
        ExecuteAsync("UPDATE webhook_outbox SET delivered_at = now(), attempts = attempts + 1, last_error = NULL WHERE delivery_id = $1", [deliveryId], cancellationToken);

    /// <summary>Records a failed attempt and makes the row due again after <paramref name="delay"/>.</summary>
    public Task RescheduleAsync(Guid deliveryId, TimeSpan delay, string error, CancellationToken cancellationToken = default) =>
        ExecuteAsync(
            "UPDATE webhook_outbox SET attempts = attempts + 1, next_attempt_at = now() + $2, last_error = left($3, 1000) WHERE delivery_id = $1",
            [deliveryId, delay, error],
            cancellationToken);

    /// <summary>Makes a claimed row due again after <paramref name="delay"/> without counting an attempt (nothing was sent).</summary>
    public Task ReleaseAsync(Guid deliveryId, TimeSpan delay, CancellationToken cancellationToken = default) =>
        ExecuteAsync("UPDATE webhook_outbox SET next_attempt_at = now() + $2 WHERE delivery_id = $1", [deliveryId, delay], cancellationToken);

    /// <summary>Records the last allowed attempt as failed: the row is dead-lettered and no longer claimed.</summary>
    public Task DeadLetterAsync(Guid deliveryId, string error, CancellationToken cancellationToken = default) =>
        ExecuteAsync(
            "UPDATE webhook_outbox SET attempts = attempts + 1, dead_lettered_at = now(), last_error = left($2, 1000) WHERE delivery_id = $1",
            [deliveryId, error],
            cancellationToken);

    /// <summary>The dead letters of subscription <paramref name="webhookId"/> of <paramref name="fleetId"/>, newest first.</summary>
    public async Task<IReadOnlyList<DeadLetterRow>> ListDeadLettersAsync(Guid fleetId, Guid webhookId, int limit, CancellationToken cancellationToken = default)
    {
        var list = new List<DeadLetterRow>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "SELECT delivery_id, alert_id, attempts, last_error, created_at, dead_lettered_at FROM webhook_outbox "
                + "WHERE fleet_id = $1 AND webhook_id = $2 AND dead_lettered_at IS NOT NULL ORDER BY dead_lettered_at DESC, delivery_id LIMIT $3",
                connection);
            command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
            command.Parameters.Add(new NpgsqlParameter { Value = webhookId });
            command.Parameters.Add(new NpgsqlParameter { Value = limit });
            await using var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
            {
                list.Add(new DeadLetterRow(
                    reader.GetGuid(0), reader.GetGuid(1), reader.GetInt32(2), reader.IsDBNull(3) ? null : reader.GetString(3),
                    reader.GetFieldValue<DateTimeOffset>(4), reader.GetFieldValue<DateTimeOffset>(5)));
            }
        }

        return list;
    }

    /// <summary>
    /// Makes every dead letter of the subscription due now with a fresh attempt count (the last error is kept until
    /// the next attempt); returns how many were re-queued.
    /// </summary>
    public async Task<int> RequeueDeadLettersAsync(Guid fleetId, Guid webhookId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "UPDATE webhook_outbox SET dead_lettered_at = NULL, attempts = 0, next_attempt_at = now() "
                + "WHERE fleet_id = $1 AND webhook_id = $2 AND dead_lettered_at IS NOT NULL",
                connection);
            command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
            command.Parameters.Add(new NpgsqlParameter { Value = webhookId });
            return await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
        }
    }

    /// <summary>
    /// Deletes rows delivered before <paramref name="deliveredBefore"/> and every row (pending, delivered or dead) written
    /// before <paramref name="createdBefore"/>, so no location payload outlives the data retention; returns the count.
    /// </summary>
    public async Task<int> PurgeAsync(DateTimeOffset deliveredBefore, DateTimeOffset createdBefore, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "DELETE FROM webhook_outbox WHERE delivered_at < $1 OR created_at < $2", connection);
            command.Parameters.Add(new NpgsqlParameter { Value = deliveredBefore });
            command.Parameters.Add(new NpgsqlParameter { Value = createdBefore });
            return await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
        }
    }

    private async Task ExecuteAsync(string sql, object[] parameters, CancellationToken cancellationToken)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(sql, connection);
            foreach (var p in parameters)
            {
                command.Parameters.Add(new NpgsqlParameter { Value = p });
            }

            await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
        }
    }
}
