// The durable webhook outbox: claim due rows, mark delivered, reschedule.
using Npgsql;

namespace FusionService.Storage.Alerts;

/// <summary>
/// Claims and settles <c>webhook_outbox</c> rows. A claim (<c>FOR UPDATE SKIP LOCKED</c>, so several dispatchers
/// never take the same row) moves each row's <c>next_attempt_at</c> forward by a lease; if the dispatcher dies while
/// sending, the row becomes due again when the lease runs out, so every committed delivery is eventually attempted.
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

    /// <summary>Claims up to <paramref name="limit"/> undelivered rows due now, oldest due first, leasing them for <paramref name="lease"/>.</summary>
    public async Task<IReadOnlyList<OutboxDelivery>> ClaimDueAsync(int limit, TimeSpan lease, CancellationToken cancellationToken = default)
    {
        var list = new List<OutboxDelivery>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "WITH due AS (SELECT delivery_id FROM webhook_outbox WHERE delivered_at IS NULL AND next_attempt_at <= now() "
                + "ORDER BY next_attempt_at LIMIT $1 FOR UPDATE SKIP LOCKED) "
                + "UPDATE webhook_outbox o SET next_attempt_at = now() + $2 FROM due, webhooks w "
                + "WHERE o.delivery_id = due.delivery_id AND w.webhook_id = o.webhook_id "
                + "RETURNING o.delivery_id, o.alert_id, w.url, w.secret, o.payload, o.attempts, o.created_at",
                connection);
            command.Parameters.Add(new NpgsqlParameter { Value = limit });
            command.Parameters.Add(new NpgsqlParameter { Value = lease });
            await using var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
            {
                list.Add(new OutboxDelivery(
                    reader.GetGuid(0), reader.GetGuid(1), reader.GetString(2), reader.GetString(3), reader.GetString(4), reader.GetInt32(5),
                    reader.GetFieldValue<DateTimeOffset>(6)));
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
