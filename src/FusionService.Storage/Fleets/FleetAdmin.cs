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
    public async Task<CreatedApiKey> CreateApiKeyAsync(
        Guid fleetId, ApiKeyRole role, string label, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(label);
        var keyId = Guid.CreateVersion7();
        var secret = SecretPrefix + Base64Url.EncodeToString(RandomNumberGenerator.GetBytes(SecretRandomBytes));
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await connection.ExecuteAsync(new CommandDefinition(
                "INSERT INTO api_keys (key_id, fleet_id, role, key_hash, label) VALUES (@KeyId, @FleetId, @Role, @KeyHash, @Label)",
                new { KeyId = keyId, FleetId = fleetId, Role = RoleText(role), KeyHash = HashSecret(secret), Label = label },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }

        return new CreatedApiKey(keyId, fleetId, role, secret);
    }

    /// <summary>Finds the fleet and role of <paramref name="secret"/>.</summary>
    /// <param name="secret">A secret as returned by <see cref="CreateApiKeyAsync"/>.</param>
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
            var rows = await connection.QueryAsync<(Guid KeyId, Guid FleetId, string Role)>(new CommandDefinition(
                "SELECT key_id, fleet_id, role FROM api_keys WHERE key_hash = @KeyHash AND revoked_at IS NULL",
                new { KeyHash = HashSecret(secret) },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList() is [var row] ? new ApiKeyIdentity(row.KeyId, row.FleetId, ParseRole(row.Role)) : null;
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
