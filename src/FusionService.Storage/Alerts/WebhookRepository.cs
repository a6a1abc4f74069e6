// Webhook subscriptions of a fleet.
using Npgsql;

namespace FusionService.Storage.Alerts;

/// <summary>Creates, lists and deletes <c>webhooks</c>; every API call is scoped to one fleet.</summary>
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

    /// <summary>
    /// Adds a subscription whose signing secret is given already encrypted (<paramref name="protectedSecret"/>); null when
    /// the fleet has <paramref name="maxPerFleet"/> subscriptions already (counted under a lock on the fleet's row, so
    /// concurrent requests cannot pass the cap together).
    /// </summary>
    public async Task<WebhookRow?> CreateAsync(
        Guid fleetId, string url, string protectedSecret, int maxPerFleet = int.MaxValue, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(url);
        ArgumentNullException.ThrowIfNull(protectedSecret);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                await using (var lockFleet = new NpgsqlCommand("SELECT 1 FROM fleets WHERE fleet_id = $1 FOR UPDATE", connection, transaction))
                {
                    lockFleet.Parameters.Add(new NpgsqlParameter { Value = fleetId });
                    await lockFleet.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                await using (var count = new NpgsqlCommand("SELECT count(*) FROM webhooks WHERE fleet_id = $1", connection, transaction))
                {
                    count.Parameters.Add(new NpgsqlParameter { Value = fleetId });
                    long existing = (long)(await count.ExecuteScalarAsync(cancellationToken).ConfigureAwait(false) ?? 0L);
                    if (existing >= maxPerFleet)
                    {
                        return null;
                    }
                }

                await using var command = new NpgsqlCommand(
                    "INSERT INTO webhooks (webhook_id, fleet_id, url, secret_protected) VALUES ($1, $2, $3, $4) RETURNING webhook_id, fleet_id, url, created_at",
                    connection,
                    transaction);
                command.Parameters.Add(new NpgsqlParameter { Value = Guid.CreateVersion7() });
                command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
                command.Parameters.Add(new NpgsqlParameter { Value = url });
                command.Parameters.Add(new NpgsqlParameter { Value = protectedSecret });
                var rows = await ReadAsync(command, cancellationToken).ConfigureAwait(false);
                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return rows[0];
            }
        }
    }

    /// <summary>Subscriptions whose secret is still stored in plain text (written before migration 0009), as (id, secret).</summary>
    public async Task<IReadOnlyList<(Guid WebhookId, string Secret)>> ListPlaintextSecretsAsync(CancellationToken cancellationToken = default)
    {
        var list = new List<(Guid, string)>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand("SELECT webhook_id, secret FROM webhooks WHERE secret IS NOT NULL", connection);
            await using var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
            {
                list.Add((reader.GetGuid(0), reader.GetString(1)));
            }
        }

        return list;
    }

    /// <summary>Stores the encrypted secret of a subscription and clears its plain-text one.</summary>
    public async Task ReplacePlaintextSecretAsync(Guid webhookId, string protectedSecret, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand("UPDATE webhooks SET secret_protected = $2, secret = NULL WHERE webhook_id = $1", connection);
            command.Parameters.Add(new NpgsqlParameter { Value = webhookId });
            command.Parameters.Add(new NpgsqlParameter { Value = protectedSecret });
            await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
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
