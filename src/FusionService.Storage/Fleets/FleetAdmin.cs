// Creation of fleets and their API keys; resolution and revocation of keys.
using System.Buffers.Text;
using System.Security.Cryptography;
using System.Text;
using Dapper;
using Npgsql;

namespace FusionService.Storage.Fleets;

/// <summary>
/// Administers fleets and their API keys. A key's secret is 32 bytes from the operating system's
/// cryptographic random generator, written as <c>fsk_</c> + base64url; only its SHA-256 hash is stored, and a
/// secret is resolved by looking up that hash.
/// </summary>
public sealed class FleetAdmin
{
    /// <summary>Prefix of every API key secret; lets log scanners and people recognise one.</summary>
    public const string SecretPrefix = "fsk_";

    /// <summary>Random bytes in a secret (256 bits).</summary>
    public const int SecretRandomBytes = 32;

    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the administrator.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public FleetAdmin(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
    }

    /// <summary>Creates a fleet.</summary>
    /// <param name="name">Unique display name, 1-200 characters after trimming.</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <returns>The new fleet's id (a version 7 UUID, ordered by creation time).</returns>
    /// <exception cref="PostgresException">The name is taken (SqlState 23505) or blank (23514).</exception>
    public async Task<Guid> CreateFleetAsync(string name, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(name);
        var fleetId = Guid.CreateVersion7();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await connection.ExecuteAsync(new CommandDefinition(
                "INSERT INTO fleets (fleet_id, name) VALUES (@FleetId, @Name)",
                new { FleetId = fleetId, Name = name },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }

        return fleetId;
    }

    /// <summary>The id of the fleet named <paramref name="name"/>, or null when there is none.</summary>
    public async Task<Guid?> FindFleetAsync(string name, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(name);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await connection.ExecuteScalarAsync<Guid?>(new CommandDefinition(
                "SELECT fleet_id FROM fleets WHERE name = @Name",
                new { Name = name },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    /// <summary>Creates an API key for a fleet and returns its secret, the only time it is available.</summary>
    /// <param name="fleetId">The fleet the key is bound to.</param>
    /// <param name="role">What the key may do.</param>
    /// <param name="label">Free text to recognise the key by (e.g. the device or person holding it).</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <exception cref="PostgresException">Unknown fleet (SqlState 23503).</exception>
    public Task<CreatedApiKey> CreateApiKeyAsync(
        Guid fleetId, ApiKeyRole role, string label, CancellationToken cancellationToken = default) =>
        CreateApiKeyAsync(fleetId, role, label, expiresAt: null, cancellationToken);

    /// <summary>Creates an API key that stops being accepted at <paramref name="expiresAt"/> (null: never).</summary>
    /// <param name="fleetId">The fleet the key is bound to.</param>
    /// <param name="role">What the key may do.</param>
    /// <param name="label">Free text to recognise the key by.</param>
    /// <param name="expiresAt">Expiry instant, later than now; null for a key without expiry.</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <exception cref="PostgresException">Unknown fleet (SqlState 23503) or an expiry not after the creation (23514).</exception>
    public async Task<CreatedApiKey> CreateApiKeyAsync(
        Guid fleetId, ApiKeyRole role, string label, DateTimeOffset? expiresAt, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(label);
        var keyId = Guid.CreateVersion7();
        var secret = SecretPrefix + Base64Url.EncodeToString(RandomNumberGenerator.GetBytes(SecretRandomBytes));
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await connection.ExecuteAsync(new CommandDefinition(
                "INSERT INTO api_keys (key_id, fleet_id, role, key_hash, label, expires_at) VALUES (@KeyId, @FleetId, @Role, @KeyHash, @Label, @ExpiresAt)",
                new { KeyId = keyId, FleetId = fleetId, Role = RoleText(role), KeyHash = HashSecret(secret), Label = label, ExpiresAt = expiresAt?.UtcDateTime },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }

        return new CreatedApiKey(keyId, fleetId, role, secret);
    }

    /// <summary>Finds the fleet and role of <paramref name="secret"/>.</summary>
    /// <param name="secret">A secret as returned by <c>CreateApiKeyAsync</c>.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    /// <returns>The key's identity; null when the secret is malformed, unknown or revoked.</returns>
    public async Task<ApiKeyIdentity?> ResolveApiKeyAsync(string secret, CancellationToken cancellationToken = default)
    {
        if (string.IsNullOrEmpty(secret) || !secret.StartsWith(SecretPrefix, StringComparison.Ordinal))
        {
            return null;
        }

        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<(Guid KeyId, Guid FleetId, string Role, DateTime? ExpiresAt)>(new CommandDefinition(
                "SELECT key_id, fleet_id, role, expires_at FROM api_keys WHERE key_hash = @KeyHash AND revoked_at IS NULL "
                + "AND (expires_at IS NULL OR expires_at > now())",
                new { KeyHash = HashSecret(secret) },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList() is [var row]
                ? new ApiKeyIdentity(row.KeyId, row.FleetId, ParseRole(row.Role)) { ExpiresAt = Utc(row.ExpiresAt) }
                : null;
        }
    }

    /// <summary>Revokes a key: it no longer resolves. The row is kept with its revocation time.</summary>
    /// <param name="keyId">The key to revoke.</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <returns>True when an active key was revoked; false when the key is unknown or already revoked.</returns>
    public async Task<bool> RevokeApiKeyAsync(Guid keyId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var changed = await connection.ExecuteAsync(new CommandDefinition(
                "UPDATE api_keys SET revoked_at = greatest(now(), created_at) WHERE key_id = @KeyId AND revoked_at IS NULL",
                new { KeyId = keyId },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return changed == 1;
        }
    }

    /// <summary>Revokes a key of <paramref name="fleetId"/> only (another fleet's key is not found).</summary>
    /// <returns>The key as it is now; null when the fleet has no such key.</returns>
    public async Task<ApiKeyInfo?> RevokeApiKeyAsync(Guid fleetId, Guid keyId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await connection.ExecuteAsync(new CommandDefinition(
                "UPDATE api_keys SET revoked_at = greatest(now(), created_at) WHERE fleet_id = @FleetId AND key_id = @KeyId AND revoked_at IS NULL",
                new { FleetId = fleetId, KeyId = keyId },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }

        return await GetApiKeyAsync(fleetId, keyId, cancellationToken).ConfigureAwait(false);
    }

    /// <summary>Every key of <paramref name="fleetId"/>, revoked and expired ones included, oldest first.</summary>
    public async Task<IReadOnlyList<ApiKeyInfo>> ListApiKeysAsync(Guid fleetId, CancellationToken cancellationToken = default) =>
        await QueryKeysAsync("WHERE fleet_id = $1 ORDER BY created_at, key_id", [fleetId], cancellationToken).ConfigureAwait(false);

    /// <summary>One key of <paramref name="fleetId"/>, or null when the fleet has no such key.</summary>
    public async Task<ApiKeyInfo?> GetApiKeyAsync(Guid fleetId, Guid keyId, CancellationToken cancellationToken = default) =>
        (await QueryKeysAsync("WHERE fleet_id = $1 AND key_id = $2", [fleetId, keyId], cancellationToken).ConfigureAwait(false)) is [var key] ? key : null;

    /// <summary>
    /// Replaces a key: creates a new key with the same fleet, role and label (and the same expiry, if any, unless the
    /// old one is past it), and lets the old key expire after <paramref name="graceSeconds"/> (0 revokes it at once), so
    /// that devices can switch over. One transaction.
    /// </summary>
    /// <returns>The new key with its secret, or null when the fleet has no active key <paramref name="keyId"/>.</returns>
    public async Task<CreatedApiKey?> RotateApiKeyAsync(Guid fleetId, Guid keyId, int graceSeconds, CancellationToken cancellationToken = default)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(graceSeconds);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                var old = (await connection.QueryAsync<(string Role, string Label, DateTime? ExpiresAt)>(new CommandDefinition(
                    "SELECT role, label, expires_at FROM api_keys WHERE fleet_id = @FleetId AND key_id = @KeyId AND revoked_at IS NULL "
                    + "AND (expires_at IS NULL OR expires_at > now()) FOR UPDATE",
                    new { FleetId = fleetId, KeyId = keyId },
                    transaction,
                    cancellationToken: cancellationToken)).ConfigureAwait(false)).AsList();
                if (old is not [var row])
                {
                    return null;
                }

                var newId = Guid.CreateVersion7();
                var role = ParseRole(row.Role);
                var secret = SecretPrefix + Base64Url.EncodeToString(RandomNumberGenerator.GetBytes(SecretRandomBytes));
                await connection.ExecuteAsync(new CommandDefinition(
                    "INSERT INTO api_keys (key_id, fleet_id, role, key_hash, label, expires_at) VALUES (@KeyId, @FleetId, @Role, @KeyHash, @Label, @ExpiresAt)",
                    new { KeyId = newId, FleetId = fleetId, Role = row.Role, KeyHash = HashSecret(secret), row.Label, row.ExpiresAt },
                    transaction,
                    cancellationToken: cancellationToken)).ConfigureAwait(false);
                string retire = graceSeconds == 0
                    ? "UPDATE api_keys SET revoked_at = greatest(now(), created_at) WHERE key_id = @KeyId"
                    : "UPDATE api_keys SET expires_at = least(coalesce(expires_at, 'infinity'), greatest(now() + make_interval(secs => @Grace), created_at + interval '1 microsecond')) WHERE key_id = @KeyId";
                await connection.ExecuteAsync(new CommandDefinition(retire, new { KeyId = keyId, Grace = (double)graceSeconds }, transaction, cancellationToken: cancellationToken)).ConfigureAwait(false);
                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return new CreatedApiKey(newId, fleetId, role, secret);
            }
        }
    }

    /// <summary>Those of <paramref name="keyIds"/> that are neither revoked nor expired now.</summary>
    public async Task<HashSet<Guid>> ActiveKeysAmongAsync(IReadOnlyCollection<Guid> keyIds, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(keyIds);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<Guid>(new CommandDefinition(
                "SELECT key_id FROM api_keys WHERE key_id = ANY(@Ids) AND revoked_at IS NULL AND (expires_at IS NULL OR expires_at > now())",
                new { Ids = keyIds.ToArray() },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return [.. rows];
        }
    }

    /// <summary>The fleet's own vehicle quota (null: the service default applies).</summary>
    /// <exception cref="KeyNotFoundException">No such fleet.</exception>
    public async Task<int?> GetVehicleQuotaAsync(Guid fleetId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = (await connection.QueryAsync<int?>(new CommandDefinition(
                "SELECT max_vehicles FROM fleets WHERE fleet_id = @FleetId", new { FleetId = fleetId }, cancellationToken: cancellationToken)).ConfigureAwait(false)).AsList();
            return rows is [var quota] ? quota : throw new KeyNotFoundException("No fleet " + fleetId.ToString("D") + ".");
        }
    }

    /// <summary>Sets the fleet's vehicle quota (null returns it to the service default).</summary>
    /// <returns>False when there is no such fleet.</returns>
    /// <exception cref="PostgresException">A quota outside 1..10,000,000 (SqlState 23514).</exception>
    public async Task<bool> SetVehicleQuotaAsync(Guid fleetId, int? maxVehicles, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await connection.ExecuteAsync(new CommandDefinition(
                "UPDATE fleets SET max_vehicles = @Max WHERE fleet_id = @FleetId", new { FleetId = fleetId, Max = maxVehicles }, cancellationToken: cancellationToken)).ConfigureAwait(false) == 1;
        }
    }

    /// <summary>The ids of every vehicle the fleet has.</summary>
    public async Task<IReadOnlyList<string>> VehicleIdsAsync(Guid fleetId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return (await connection.QueryAsync<string>(new CommandDefinition(
                "SELECT vehicle_id FROM vehicles WHERE fleet_id = @FleetId", new { FleetId = fleetId }, cancellationToken: cancellationToken)).ConfigureAwait(false)).AsList();
        }
    }

    private async Task<List<ApiKeyInfo>> QueryKeysAsync(string where, object[] values, CancellationToken cancellationToken)
    {
        var list = new List<ApiKeyInfo>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            using var command = new NpgsqlCommand("SELECT key_id, fleet_id, role, label, created_at, expires_at, revoked_at FROM api_keys " + where, connection);
            foreach (var value in values)
            {
                command.Parameters.Add(new NpgsqlParameter { Value = value });
            }

            var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            await using (reader.ConfigureAwait(false))
            {
                while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                {
                    list.Add(new ApiKeyInfo(
                        reader.GetGuid(0),
                        reader.GetGuid(1),
                        ParseRole(reader.GetString(2)),
                        reader.GetString(3),
                        reader.GetFieldValue<DateTimeOffset>(4),
                        reader.IsDBNull(5) ? null : reader.GetFieldValue<DateTimeOffset>(5),
                        reader.IsDBNull(6) ? null : reader.GetFieldValue<DateTimeOffset>(6)));
                }
            }
        }

        return list;
    }

    private static DateTimeOffset? Utc(DateTime? value) =>
        value is { } t ? new DateTimeOffset(DateTime.SpecifyKind(t, DateTimeKind.Utc)) : null;

    /// <summary>SHA-256 of the UTF-8 bytes of <paramref name="secret"/>: the value stored in <c>api_keys.key_hash</c>.</summary>
    /// <param name="secret">A secret string.</param>
    /// <returns>32 bytes.</returns>
    public static byte[] HashSecret(string secret)
    {
        ArgumentNullException.ThrowIfNull(secret);
        return SHA256.HashData(Encoding.UTF8.GetBytes(secret));
    }

    private static string RoleText(ApiKeyRole role) => role switch
    {
        ApiKeyRole.Ingest => "ingest",
        ApiKeyRole.Read => "read",
        ApiKeyRole.Admin => "admin",
        _ => throw new ArgumentOutOfRangeException(nameof(role), role, "Unknown API key role."),
    };

    private static ApiKeyRole ParseRole(string role) => role switch
    {
        "ingest" => ApiKeyRole.Ingest,
        "read" => ApiKeyRole.Read,
        "admin" => ApiKeyRole.Admin,
        _ => throw new InvalidOperationException("Stored API key has an unknown role '" + role + "'."),
    };
}
