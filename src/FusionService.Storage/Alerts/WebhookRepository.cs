// Webhook subscriptions of a fleet.
using Npgsql;

namespace FusionService.Storage.Alerts;

/// <summary>Creates, lists and deletes <c>webhooks</c>; every call is scoped to one fleet.</summary>
public sealed class WebhookRepository
{
    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the repository.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public WebhookRepository(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
    }

    /// <summary>Adds a subscription; <paramref name="secret"/> (16-200 characters) signs its deliveries.</summary>
    public async Task<WebhookRow> CreateAsync(Guid fleetId, string url, string secret, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(url);
        ArgumentNullException.ThrowIfNull(secret);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "INSERT INTO webhooks (webhook_id, fleet_id, url, secret) VALUES ($1, $2, $3, $4) RETURNING webhook_id, fleet_id, url, created_at", connection);
            command.Parameters.Add(new NpgsqlParameter { Value = Guid.CreateVersion7() });
            command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
            command.Parameters.Add(new NpgsqlParameter { Value = url });
            command.Parameters.Add(new NpgsqlParameter { Value = secret });
            var rows = await ReadAsync(command, cancellationToken).ConfigureAwait(false);
            return rows[0];
        }
    }

    /// <summary>The fleet's subscriptions, oldest first.</summary>
    public async Task<IReadOnlyList<WebhookRow>> ListAsync(Guid fleetId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "SELECT webhook_id, fleet_id, url, created_at FROM webhooks WHERE fleet_id = $1 ORDER BY created_at, webhook_id", connection);
            command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
            return await ReadAsync(command, cancellationToken).ConfigureAwait(false);
        }
    }

    /// <summary>Deletes a subscription and its pending deliveries; false when the fleet has no such subscription.</summary>
    public async Task<bool> DeleteAsync(Guid fleetId, Guid webhookId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand("DELETE FROM webhooks WHERE fleet_id = $1 AND webhook_id = $2", connection);
            command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
            command.Parameters.Add(new NpgsqlParameter { Value = webhookId });
            return await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false) > 0;
        }
    }

    private static async Task<List<WebhookRow>> ReadAsync(NpgsqlCommand command, CancellationToken cancellationToken)
    {
        var list = new List<WebhookRow>();
        await using var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
        while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
        {
            list.Add(new WebhookRow(reader.GetGuid(0), reader.GetGuid(1), reader.GetString(2), reader.GetFieldValue<DateTimeOffset>(3)));
        }

        return list;
    }
}
