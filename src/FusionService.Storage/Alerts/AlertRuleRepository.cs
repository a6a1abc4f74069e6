// Per-fleet alert rule settings stored as one JSON document.
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Alerts;

/// <summary>Reads and writes <c>alert_rules</c>: one JSON document of thresholds per fleet (the service defines its shape).</summary>
public sealed class AlertRuleRepository
{
    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the repository.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public AlertRuleRepository(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
    }

    /// <summary>The fleet's settings document, or null when it uses the defaults.</summary>
    public async Task<string?> GetAsync(Guid fleetId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand("SELECT settings::text FROM alert_rules WHERE fleet_id = $1", connection);
            command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
            return await command.ExecuteScalarAsync(cancellationToken).ConfigureAwait(false) as string;
        }
    }

    /// <summary>Stores the fleet's settings document (replacing the previous one).</summary>
    public async Task PutAsync(Guid fleetId, string settingsJson, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(settingsJson);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(
                "INSERT INTO alert_rules (fleet_id, settings) VALUES ($1, $2) ON CONFLICT (fleet_id) DO UPDATE SET settings = EXCLUDED.settings, updated_at = now()",
                connection);
            command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
            command.Parameters.Add(new NpgsqlParameter { Value = settingsJson, NpgsqlDbType = NpgsqlDbType.Jsonb });
            await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
        }
    }
}
