// Applies the embedded SQL migrations in order, once each, safely under concurrency.
using System.Buffers.Binary;
using System.Diagnostics;
using System.Security.Cryptography;
using System.Text;
using FusionService.Storage.Logging;
using FusionService.Storage.Schemas;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Logging.Abstractions;
using Npgsql;

namespace FusionService.Storage.Migrations;

/// <summary>
/// Applies the SQL migrations embedded in this assembly (<c>Migrations/Sql/NNNN_name.sql</c>) in file-name
/// order, each in its own transaction, and records them in <c>schema_migrations(version, applied_at,
/// checksum)</c>.
/// </summary>
/// <remarks>
/// Every transaction first takes a transaction-scoped advisory lock (<c>pg_advisory_xact_lock</c>) whose key is
/// derived from the schema name, so runners started at the same time by several processes apply each migration
/// exactly once and the others see it recorded; the lock is released by commit or rollback, never left behind
/// on a pooled connection. A recorded migration whose SQL has changed since it was applied is an error.
/// </remarks>
public sealed class MigrationRunner
{
    private readonly string _connectionString;
    private readonly string? _schema;
    private readonly ILogger _logger;
    private readonly IReadOnlyList<Migration> _migrations;
    private readonly long _lockKey;

    /// <summary>Creates a runner for the embedded migrations.</summary>
    /// <param name="connectionString">Npgsql connection string of the target database.</param>
    /// <param name="schema">Schema to migrate (created when missing; see <see cref="StorageSchema.Validate"/>),
    /// or null for the connection's own <c>search_path</c>.</param>
    /// <param name="logger">Receives one message per applied migration; null for none.</param>
    public MigrationRunner(string connectionString, string? schema = null, ILogger? logger = null)
        : this(connectionString, schema, logger, EmbeddedMigrations.Load())
    {
    }

    /// <summary>Creates a runner for an explicit list of migrations (tests).</summary>
    internal MigrationRunner(string connectionString, string? schema, ILogger? logger, IEnumerable<Migration> migrations)
    {
        ArgumentException.ThrowIfNullOrEmpty(connectionString);
        if (schema is not null)
        {
            StorageSchema.Validate(schema);
        }

        _connectionString = connectionString;
        _schema = schema;
        _logger = logger ?? NullLogger.Instance;
        _migrations = [.. migrations.OrderBy(m => m.Version, StringComparer.Ordinal)];
        var duplicate = _migrations.GroupBy(m => m.Version, StringComparer.Ordinal).FirstOrDefault(g => g.Count() > 1);
        if (duplicate is not null)
        {
            throw new ArgumentException("Migration version '" + duplicate.Key + "' appears twice.", nameof(migrations));
        }

        // Any 64-bit key works as long as every runner derives the same one for the same schema.
        var keySource = Encoding.UTF8.GetBytes("FusionService.Storage/migrations/" + (schema ?? string.Empty));
        _lockKey = BinaryPrimitives.ReadInt64LittleEndian(SHA256.HashData(keySource));
    }

    /// <summary>Versions of the migrations this runner knows, in the order it applies them.</summary>
    public IReadOnlyList<string> Versions => [.. _migrations.Select(m => m.Version)];

    /// <summary>Applies every migration not yet recorded, in version order.</summary>
    /// <param name="cancellationToken">Cancels between and within migrations (the current one rolls back).</param>
    /// <returns>Versions this call applied; empty when the schema was already up to date.</returns>
    /// <exception cref="InvalidOperationException">An applied migration's SQL differs from the recorded checksum.</exception>
    /// <exception cref="PostgresException">A migration's SQL failed; it was rolled back and later ones not run.</exception>
    public async Task<IReadOnlyList<string>> RunAsync(CancellationToken cancellationToken = default)
    {
        await using var connection = new NpgsqlConnection(_connectionString);
        await connection.OpenAsync(cancellationToken).ConfigureAwait(false);

        await using (var bootstrap = await BeginLockedAsync(connection, cancellationToken).ConfigureAwait(false))
        {
            var sql = """
                CREATE TABLE IF NOT EXISTS schema_migrations (
                    version    text PRIMARY KEY,
                    applied_at timestamptz NOT NULL DEFAULT now(),
                    checksum   bytea NOT NULL
                )
                """;
            if (_schema is not null)
            {
                // Creating the schema here, under the lock, avoids the CREATE SCHEMA IF NOT EXISTS race.
                sql = "CREATE SCHEMA IF NOT EXISTS " + StorageSchema.Quote(_schema) + ";\n"
                    + "SELECT set_config('search_path', '" + StorageSchema.Quote(_schema) + "', true);\n" + sql;
            }

            await ExecuteAsync(connection, bootstrap, sql, cancellationToken).ConfigureAwait(false);
            await bootstrap.CommitAsync(cancellationToken).ConfigureAwait(false);
        }

        var applied = new List<string>();
        foreach (var migration in _migrations)
        {
            await using var transaction = await BeginLockedAsync(connection, cancellationToken).ConfigureAwait(false);
            await using (var check = new NpgsqlCommand("SELECT checksum FROM schema_migrations WHERE version = $1", connection, transaction))
            {
                check.Parameters.Add(new NpgsqlParameter { Value = migration.Version });
                if (await check.ExecuteScalarAsync(cancellationToken).ConfigureAwait(false) is byte[] recorded)
                {
                    if (!recorded.AsSpan().SequenceEqual(migration.Checksum))
                    {
                        throw new InvalidOperationException(
                            "Migration '" + migration.Version + "' was applied with different SQL than this build carries; "
                            + "applied migrations must never be edited, add a new one instead.");
                    }

                    continue;
                }
            }

            var clock = Stopwatch.StartNew();
            await ExecuteAsync(connection, transaction, migration.Sql, cancellationToken).ConfigureAwait(false);
            await using (var record = new NpgsqlCommand(
                "INSERT INTO schema_migrations (version, checksum) VALUES ($1, $2)", connection, transaction))
            {
                record.Parameters.Add(new NpgsqlParameter { Value = migration.Version });
                record.Parameters.Add(new NpgsqlParameter { Value = migration.Checksum });
                await record.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
            }

            await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
            applied.Add(migration.Version);
            StorageLog.MigrationApplied(_logger, migration.Version, _schema ?? "(search_path)", clock.ElapsedMilliseconds);
        }

        return applied;
    }

    private async Task<NpgsqlTransaction> BeginLockedAsync(NpgsqlConnection connection, CancellationToken cancellationToken)
    {
        var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
        try
        {
            await using var command = new NpgsqlCommand("SELECT pg_advisory_xact_lock($1)", connection, transaction);
            command.Parameters.Add(new NpgsqlParameter { Value = _lockKey });
            await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
            if (_schema is not null)
            {
                await ExecuteAsync(
                    connection,
                    transaction,
                    "SELECT set_config('search_path', '" + StorageSchema.Quote(_schema) + "', true)",
                    cancellationToken).ConfigureAwait(false);
            }

            return transaction;
        }
        catch (Exception)
        {
            await transaction.DisposeAsync().ConfigureAwait(false);
            throw;
        }
    }

    private static async Task ExecuteAsync(
        NpgsqlConnection connection, NpgsqlTransaction transaction, string sql, CancellationToken cancellationToken)
    {
        await using var command = new NpgsqlCommand(sql, connection, transaction);
        await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
    }
}
