// Creates daily partitions ahead of time and drops those (and old filter checkpoints) past the retention.
using System.Buffers.Binary;
using System.Globalization;
using System.Security.Cryptography;
using System.Text;
using Dapper;
using FusionService.Estimation.Time;
using FusionService.Storage.Checkpoints;
using FusionService.Storage.Logging;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Logging.Abstractions;
using Npgsql;

namespace FusionService.Storage.Partitions;

/// <summary>
/// Keeps the daily range partitions of <c>measurement_chunks</c> and <c>fused_states</c>: one partition per UTC day of
/// each, named <c>TABLE_pYYYYMMDD</c>, covering [day 00:00Z, next day 00:00Z) of <c>first_us</c> (Unix microseconds) and
/// of <c>measured_at</c> respectively.
/// </summary>
/// <remarks>
/// All statements are idempotent and run under a transaction-scoped advisory lock, so several service
/// instances may maintain the same schema at once. Creating or dropping a partition briefly locks its parent
/// table; run the upkeep ahead of need (at start-up and, say, hourly), not per write. There is no default
/// partition: a row for a day without a partition is rejected rather than parked somewhere that would block
/// creating that day's partition later.
/// </remarks>
public sealed class PartitionMaintainer
{
    private const string PartitionsOfSql = """
        SELECT c.relname AS Name, n.nspname AS SchemaName
        FROM pg_inherits i
        JOIN pg_class c ON c.oid = i.inhrelid
        JOIN pg_namespace n ON n.oid = c.relnamespace
        WHERE i.inhparent = to_regclass(@Parent)
        ORDER BY c.relname
        """;

    private readonly NpgsqlDataSource _dataSource;
    private readonly PartitionMaintenanceOptions _options;
    private readonly TimeProvider _timeProvider;
    private readonly ILogger _logger;

    /// <summary>Creates the maintainer.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    /// <param name="options">Window and retention; null for the defaults.</param>
    /// <param name="timeProvider">Source of "today" for <see cref="RunAsync(CancellationToken)"/>; null for the
    /// system clock.</param>
    /// <param name="logger">Receives one message per created or dropped partition; null for none.</param>
    /// <exception cref="ArgumentOutOfRangeException">A negative setting, or DaysBack above RetentionDays.</exception>
    public PartitionMaintainer(
        NpgsqlDataSource dataSource,
        PartitionMaintenanceOptions? options = null,
        TimeProvider? timeProvider = null,
        ILogger? logger = null)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        options ??= new PartitionMaintenanceOptions();
        ArgumentOutOfRangeException.ThrowIfNegative(options.DaysBack, nameof(options));
        ArgumentOutOfRangeException.ThrowIfNegative(options.DaysAhead, nameof(options));
        ArgumentOutOfRangeException.ThrowIfNegative(options.RetentionDays, nameof(options));
        if (options.DaysBack > options.RetentionDays)
        {
            throw new ArgumentOutOfRangeException(
                nameof(options), "DaysBack must not exceed RetentionDays, or new partitions would be dropped at once.");
        }

        _dataSource = dataSource;
        _options = options;
        _timeProvider = timeProvider ?? TimeProvider.System;
        _logger = logger ?? NullLogger.Instance;
    }

    /// <summary>The partitioned tables this class maintains.</summary>
    /// <remarks>A measurement's verdict lives beside it in its chunk, and a chunk lies wholly in the day of its first
    /// measurement (migration 0013), so dropping a day drops exactly that day's measurements and verdicts.</remarks>
    public static IReadOnlyList<string> PartitionedTables { get; } = ["measurement_chunks", "fused_states"];

    /// <summary>The name of <paramref name="table"/>'s partition for <paramref name="day"/>, e.g.
    /// <c>measurement_chunks_p20250308</c>.</summary>
    /// <param name="table">One of <see cref="PartitionedTables"/>.</param>
    /// <param name="day">A UTC calendar day.</param>
    public static string PartitionName(string table, DateOnly day) =>
        table + "_p" + day.ToString("yyyyMMdd", CultureInfo.InvariantCulture);

    /// <summary>One round of upkeep for today's UTC date from the time provider: see
    /// <see cref="RunAsync(DateOnly, CancellationToken)"/>.</summary>
    /// <param name="cancellationToken">Cancels the round between statements.</param>
    public Task<PartitionMaintenanceResult> RunAsync(CancellationToken cancellationToken = default) =>
        RunAsync(DateOnly.FromDateTime(_timeProvider.GetUtcNow().UtcDateTime), cancellationToken);

    /// <summary>
    /// Creates the partitions of <paramref name="today"/> - DaysBack through <paramref name="today"/> + DaysAhead
    /// that are missing, then drops those of days before <paramref name="today"/> - RetentionDays and deletes the filter
    /// checkpoints older than that day (each vehicle keeps its newest, where its track restarts).
    /// </summary>
    /// <param name="today">The UTC day the window is centred on.</param>
    /// <param name="cancellationToken">Cancels the round between statements.</param>
    public async Task<PartitionMaintenanceResult> RunAsync(DateOnly today, CancellationToken cancellationToken = default)
    {
        var created = await EnsurePartitionsAsync(
            today.AddDays(-_options.DaysBack), today.AddDays(_options.DaysAhead), cancellationToken).ConfigureAwait(false);
        DateOnly firstKeptDay = today.AddDays(-_options.RetentionDays);
        var dropped = await DropPartitionsBeforeAsync(firstKeptDay, cancellationToken).ConfigureAwait(false);
        long firstKeptUs = UnixMicroseconds.StartOfUtcDay(firstKeptDay);
        int checkpoints = await new FilterCheckpointRepository(_dataSource).DeleteOlderThanAsync(firstKeptUs, cancellationToken).ConfigureAwait(false);
        return new PartitionMaintenanceResult(created, dropped, checkpoints);
    }

    /// <summary>Creates the missing daily partitions from <paramref name="firstDay"/> through
    /// <paramref name="lastDay"/> (both inclusive) of every table in <see cref="PartitionedTables"/>.</summary>
    /// <param name="firstDay">First UTC day.</param>
    /// <param name="lastDay">Last UTC day; no partition is created when it precedes <paramref name="firstDay"/>.</param>
    /// <param name="cancellationToken">Cancels between statements.</param>
    /// <returns>Names of the partitions created by this call.</returns>
    public async Task<IReadOnlyList<string>> EnsurePartitionsAsync(
        DateOnly firstDay, DateOnly lastDay, CancellationToken cancellationToken = default)
    {
        var created = new List<string>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            foreach (var table in PartitionedTables)
            {
                var transaction = await BeginLockedAsync(connection, table, cancellationToken).ConfigureAwait(false);
                await using (transaction.ConfigureAwait(false))
                {
                    var existing = (await ListAsync(connection, transaction, table, cancellationToken).ConfigureAwait(false))
                        .Select(p => p.Name)
                        .ToHashSet(StringComparer.Ordinal);
                    for (var day = firstDay; day <= lastDay; day = day.AddDays(1))
                    {
                        var name = PartitionName(table, day);
                        if (existing.Contains(name))
                        {
                            continue;
                        }

                        var sql = string.Create(
                            CultureInfo.InvariantCulture,
                            $"CREATE TABLE {name} PARTITION OF {table} FOR VALUES FROM ({Bound(table, day)}) TO ({Bound(table, day.AddDays(1))}){StorageOptions(table)}");
                        await connection.ExecuteAsync(new CommandDefinition(sql, transaction: transaction, cancellationToken: cancellationToken))
                            .ConfigureAwait(false);
                        created.Add(name);
                    }

                    await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                }
            }
        }

        foreach (var name in created)
        {
            StorageLog.PartitionCreated(_logger, name);
        }

        return created;
    }

    /// <summary>Drops, with all their rows, the daily partitions of days before <paramref name="firstKeptDay"/>
    /// of every table in <see cref="PartitionedTables"/>. Partitions not named by <see cref="PartitionName"/>
    /// are left alone.</summary>
    /// <param name="firstKeptDay">The oldest UTC day to keep.</param>
    /// <param name="cancellationToken">Cancels between statements.</param>
    /// <returns>Names of the partitions dropped by this call.</returns>
    public async Task<IReadOnlyList<string>> DropPartitionsBeforeAsync(DateOnly firstKeptDay, CancellationToken cancellationToken = default)
    {
        var dropped = new List<string>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            foreach (var table in PartitionedTables)
            {
                var transaction = await BeginLockedAsync(connection, table, cancellationToken).ConfigureAwait(false);
                await using (transaction.ConfigureAwait(false))
                {
                    foreach (var partition in await ListAsync(connection, transaction, table, cancellationToken).ConfigureAwait(false))
                    {
                        if (TryParseDay(table, partition.Name, out var day) && day < firstKeptDay)
                        {
                            // The schema comes from the catalogue, so no schema name is assumed here.
                            var sql = "DROP TABLE " + QuoteIdentifier(partition.SchemaName) + "." + QuoteIdentifier(partition.Name);
                            await connection.ExecuteAsync(new CommandDefinition(sql, transaction: transaction, cancellationToken: cancellationToken))
                                .ConfigureAwait(false);
                            dropped.Add(partition.Name);
                        }
                    }

                    await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                }
            }
        }

        foreach (var name in dropped)
        {
            StorageLog.PartitionDropped(_logger, name);
        }

        return dropped;
    }

    /// <summary>The UTC days that have a partition of <paramref name="table"/>, in order.</summary>
    /// <param name="table">One of <see cref="PartitionedTables"/>.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async Task<IReadOnlyList<DateOnly>> PartitionDaysAsync(string table, CancellationToken cancellationToken = default)
    {
        RequireKnownTable(table);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var days = new List<DateOnly>();
            foreach (var partition in await ListAsync(connection, null, table, cancellationToken).ConfigureAwait(false))
            {
                if (TryParseDay(table, partition.Name, out var day))
                {
                    days.Add(day);
                }
            }

            days.Sort();
            return days;
        }
    }

    private static async Task<IReadOnlyList<PartitionEntry>> ListAsync(
        NpgsqlConnection connection, NpgsqlTransaction? transaction, string table, CancellationToken cancellationToken)
    {
        var rows = await connection.QueryAsync<PartitionEntry>(new CommandDefinition(
            PartitionsOfSql, new { Parent = table }, transaction, cancellationToken: cancellationToken)).ConfigureAwait(false);
        return rows.AsList();
    }

    private static async Task<NpgsqlTransaction> BeginLockedAsync(
        NpgsqlConnection connection, string table, CancellationToken cancellationToken)
    {
        var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
        try
        {
            // One lock per schema and table: current_schema() is the first existing schema on the search path.
            await connection.ExecuteAsync(new CommandDefinition(
                "SELECT pg_advisory_xact_lock(@Key + hashtext(current_schema()))",
                new { Key = LockKey(table) },
                transaction,
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return transaction;
        }
        catch (Exception)
        {
            await transaction.DisposeAsync().ConfigureAwait(false);
            throw;
        }
    }

    private static long LockKey(string table)
    {
        var hash = SHA256.HashData(Encoding.UTF8.GetBytes("FusionService.Storage/partitions/" + table));
        return BinaryPrimitives.ReadInt64LittleEndian(hash) >> 1;
    }

    // A chunk's arrays go out of its row (TOAST) once the row passes 128 bytes instead of about 2 kB: a verdict update
    // then copies small pointers to the unchanged measurement arrays rather than the arrays that fitted in the row
    // (82.5 against 76.9 B per measurement on the storage probe's van-day, docs/storage-cost.md).
    private static string StorageOptions(string table) => table == "measurement_chunks" ? " WITH (toast_tuple_target = 128)" : string.Empty;

    // measurement_chunks is partitioned on first_us (Unix microseconds), fused_states on measured_at (timestamptz).
    private static string Bound(string table, DateOnly day) => table == "measurement_chunks"
        ? UnixMicroseconds.StartOfUtcDay(day).ToString(CultureInfo.InvariantCulture)
        : "'" + day.ToString("yyyy-MM-dd", CultureInfo.InvariantCulture) + " 00:00:00+00'";

    private static bool TryParseDay(string table, string partition, out DateOnly day)
    {
        var prefix = table + "_p";
        day = default;
        return partition.Length == prefix.Length + 8
            && partition.StartsWith(prefix, StringComparison.Ordinal)
            && DateOnly.TryParseExact(partition.AsSpan(prefix.Length), "yyyyMMdd", CultureInfo.InvariantCulture, DateTimeStyles.None, out day);
    }

    private static void RequireKnownTable(string table)
    {
        if (!PartitionedTables.Contains(table, StringComparer.Ordinal))
        {
            throw new ArgumentException("Not a partitioned table of the store: '" + table + "'.", nameof(table));
        }
    }

    private static string QuoteIdentifier(string name) => "\"" + name.Replace("\"", "\"\"", StringComparison.Ordinal) + "\"";

    private sealed record PartitionEntry(string Name, string SchemaName);
}
