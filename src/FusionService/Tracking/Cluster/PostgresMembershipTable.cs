// Orleans cluster membership kept in the service's own PostgreSQL (tables of migration 0008_cluster_membership).
using FusionService.Database;
using Microsoft.Extensions.Options;
using Npgsql;
using NpgsqlTypes;
using Orleans.Configuration;

namespace FusionService.Tracking.Cluster;

/// <summary>
/// <see cref="IMembershipTable"/> on Npgsql over <c>cluster_versions</c> and <c>cluster_members</c>, in the store's
/// schema. Orleans runs the membership protocol; this class only stores its rows with the optimistic concurrency the
/// interface demands: an insert or update of a member moves the cluster's table version in the same transaction and
/// fails (returns false, nothing changed) when the version etag or the row etag it was given is no longer current.
/// The version etag is the version number as text; the row etag is a counter moved by every <see cref="UpdateRow"/>.
/// </summary>
public sealed class PostgresMembershipTable(FusionDatabase database, IOptions<ClusterOptions> cluster) : IMembershipTable
{
    private readonly string _clusterId = cluster.Value.ClusterId;

    private const string Columns = """
        silo_address, status, proxy_port, host_name, silo_name, role_name, update_zone, fault_zone,
        start_time, i_am_alive_time, suspect_addresses, suspect_times, etag
        """;

    /// <inheritdoc/>
    public async Task InitializeMembershipTable(bool tryInitTableVersion)
    {
        if (!tryInitTableVersion)
        {
            return;
        }

        await using var command = database.DataSource.CreateCommand(
            "INSERT INTO cluster_versions (cluster_id, version) VALUES ($1, 0) ON CONFLICT (cluster_id) DO NOTHING");
        command.Parameters.Add(new NpgsqlParameter { Value = _clusterId });
        await command.ExecuteNonQueryAsync().ConfigureAwait(false);
    }

    /// <inheritdoc/>
    public async Task DeleteMembershipTableEntries(string clusterId)
    {
        await using var command = database.DataSource.CreateCommand("DELETE FROM cluster_versions WHERE cluster_id = $1");
        command.Parameters.Add(new NpgsqlParameter { Value = clusterId });
        await command.ExecuteNonQueryAsync().ConfigureAwait(false);
    }

    /// <inheritdoc/>
    public async Task CleanupDefunctSiloEntries(DateTimeOffset beforeDate)
    {
        await using var command = database.DataSource.CreateCommand(
            "DELETE FROM cluster_members WHERE cluster_id = $1 AND status <> $2 AND i_am_alive_time < $3");
        command.Parameters.Add(new NpgsqlParameter { Value = _clusterId });
        command.Parameters.Add(new NpgsqlParameter { Value = (short)Orleans.Runtime.SiloStatus.Active });
        command.Parameters.Add(new NpgsqlParameter { Value = beforeDate.UtcDateTime });
        await command.ExecuteNonQueryAsync().ConfigureAwait(false);
    }

    /// <inheritdoc/>
    public Task<MembershipTableData> ReadRow(SiloAddress key)
    {
        ArgumentNullException.ThrowIfNull(key);
        return ReadAsync(key.ToParsableString());
    }

    /// <inheritdoc/>
    public Task<MembershipTableData> ReadAll() => ReadAsync(null);

    /// <inheritdoc/>
    public async Task<bool> InsertRow(MembershipEntry entry, TableVersion tableVersion)
    {
        ArgumentNullException.ThrowIfNull(entry);
        ArgumentNullException.ThrowIfNull(tableVersion);
        await using var connection = await database.DataSource.OpenConnectionAsync().ConfigureAwait(false);
        await using var transaction = await connection.BeginTransactionAsync().ConfigureAwait(false);
        if (!await MoveVersionAsync(connection, transaction, tableVersion).ConfigureAwait(false))
        {
            return false;
        }

        await using var insert = new NpgsqlCommand(
            "INSERT INTO cluster_members (cluster_id, " + Columns + ") "
            + "VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, 0) ON CONFLICT DO NOTHING",
            connection,
            transaction);
        AddEntryParameters(insert, entry);
        if (await insert.ExecuteNonQueryAsync().ConfigureAwait(false) != 1)
        {
            return false;
        }

        await transaction.CommitAsync().ConfigureAwait(false);
        return true;
    }

    /// <inheritdoc/>
    public async Task<bool> UpdateRow(MembershipEntry entry, string etag, TableVersion tableVersion)
    {
        ArgumentNullException.ThrowIfNull(entry);
        ArgumentNullException.ThrowIfNull(tableVersion);
        if (!int.TryParse(etag, System.Globalization.NumberStyles.None, System.Globalization.CultureInfo.InvariantCulture, out int rowEtag))
        {
            return false;
        }

        await using var connection = await database.DataSource.OpenConnectionAsync().ConfigureAwait(false);
        await using var transaction = await connection.BeginTransactionAsync().ConfigureAwait(false);
        if (!await MoveVersionAsync(connection, transaction, tableVersion).ConfigureAwait(false))
        {
            return false;
        }

        await using var update = new NpgsqlCommand(
            """
            UPDATE cluster_members SET status = $3, proxy_port = $4, host_name = $5, silo_name = $6, role_name = $7,
                update_zone = $8, fault_zone = $9, start_time = $10, i_am_alive_time = $11, suspect_addresses = $12,
                suspect_times = $13, etag = etag + 1
            WHERE cluster_id = $1 AND silo_address = $2 AND etag = $14
            """,
            connection,
            transaction);
        AddEntryParameters(update, entry);
        update.Parameters.Add(new NpgsqlParameter { Value = rowEtag });
        if (await update.ExecuteNonQueryAsync().ConfigureAwait(false) != 1)
        {
            return false;
        }

        await transaction.CommitAsync().ConfigureAwait(false);
        return true;
    }

    /// <inheritdoc/>
    public async Task UpdateIAmAlive(MembershipEntry entry)
    {
        ArgumentNullException.ThrowIfNull(entry);
        await using var command = database.DataSource.CreateCommand(
            "UPDATE cluster_members SET i_am_alive_time = $3 WHERE cluster_id = $1 AND silo_address = $2");
        command.Parameters.Add(new NpgsqlParameter { Value = _clusterId });
        command.Parameters.Add(new NpgsqlParameter { Value = entry.SiloAddress.ToParsableString() });
        command.Parameters.Add(new NpgsqlParameter { Value = Utc(entry.IAmAliveTime) });
        await command.ExecuteNonQueryAsync().ConfigureAwait(false);
    }

    // Moves the cluster's version to tableVersion.Version when it still is the one named by tableVersion.VersionEtag.
    private async Task<bool> MoveVersionAsync(NpgsqlConnection connection, NpgsqlTransaction transaction, TableVersion tableVersion)
    {
        if (!int.TryParse(tableVersion.VersionEtag, System.Globalization.NumberStyles.None, System.Globalization.CultureInfo.InvariantCulture, out int expected))
        {
            return false;
        }

        await using var command = new NpgsqlCommand(
            "UPDATE cluster_versions SET version = $2 WHERE cluster_id = $1 AND version = $3", connection, transaction);
        command.Parameters.Add(new NpgsqlParameter { Value = _clusterId });
        command.Parameters.Add(new NpgsqlParameter { Value = tableVersion.Version });
        command.Parameters.Add(new NpgsqlParameter { Value = expected });
        return await command.ExecuteNonQueryAsync().ConfigureAwait(false) == 1;
    }

    // Parameters $1..$13: the cluster id and every column of the entry but the etag.
    private void AddEntryParameters(NpgsqlCommand command, MembershipEntry entry)
    {
        var suspects = entry.SuspectTimes ?? [];
        command.Parameters.Add(new NpgsqlParameter { Value = _clusterId });
        command.Parameters.Add(new NpgsqlParameter { Value = entry.SiloAddress.ToParsableString() });
        command.Parameters.Add(new NpgsqlParameter { Value = (short)entry.Status });
        command.Parameters.Add(new NpgsqlParameter { Value = entry.ProxyPort });
        command.Parameters.Add(new NpgsqlParameter { Value = entry.HostName ?? string.Empty });
        command.Parameters.Add(new NpgsqlParameter { Value = entry.SiloName ?? string.Empty });
        command.Parameters.Add(new NpgsqlParameter { Value = (object?)entry.RoleName ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Text });
        command.Parameters.Add(new NpgsqlParameter { Value = entry.UpdateZone });
        command.Parameters.Add(new NpgsqlParameter { Value = entry.FaultZone });
        command.Parameters.Add(new NpgsqlParameter { Value = Utc(entry.StartTime) });
        command.Parameters.Add(new NpgsqlParameter { Value = Utc(entry.IAmAliveTime) });
        command.Parameters.Add(new NpgsqlParameter { Value = suspects.Select(s => s.Item1.ToParsableString()).ToArray() });
        command.Parameters.Add(new NpgsqlParameter { Value = suspects.Select(s => Utc(s.Item2)).ToArray() });
    }

    // The version and the members (all, or the one named) from one snapshot.
    private async Task<MembershipTableData> ReadAsync(string? siloAddress)
    {
        await using var connection = await database.DataSource.OpenConnectionAsync().ConfigureAwait(false);
        await using var transaction = await connection.BeginTransactionAsync(System.Data.IsolationLevel.RepeatableRead).ConfigureAwait(false);
        int version;
        await using (var read = new NpgsqlCommand("SELECT version FROM cluster_versions WHERE cluster_id = $1", connection, transaction))
        {
            read.Parameters.Add(new NpgsqlParameter { Value = _clusterId });
            version = await read.ExecuteScalarAsync().ConfigureAwait(false) is int stored ? stored : 0;
        }

        var members = new List<Tuple<MembershipEntry, string>>();
        await using (var read = new NpgsqlCommand(
            "SELECT " + Columns + " FROM cluster_members WHERE cluster_id = $1 AND ($2::text IS NULL OR silo_address = $2)",
            connection,
            transaction))
        {
            read.Parameters.Add(new NpgsqlParameter { Value = _clusterId });
            read.Parameters.Add(new NpgsqlParameter { Value = (object?)siloAddress ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Text });
            await using var reader = await read.ExecuteReaderAsync().ConfigureAwait(false);
            while (await reader.ReadAsync().ConfigureAwait(false))
            {
                var addresses = reader.GetFieldValue<string[]>(10);
                var times = reader.GetFieldValue<DateTime[]>(11);
                var entry = new MembershipEntry
                {
                    SiloAddress = SiloAddress.FromParsableString(reader.GetString(0)),
                    Status = (Orleans.Runtime.SiloStatus)reader.GetInt16(1),
                    ProxyPort = reader.GetInt32(2),
                    HostName = reader.GetString(3),
                    SiloName = reader.GetString(4),
                    RoleName = reader.IsDBNull(5) ? null : reader.GetString(5),
                    UpdateZone = reader.GetInt32(6),
                    FaultZone = reader.GetInt32(7),
                    StartTime = reader.GetFieldValue<DateTime>(8),
                    IAmAliveTime = reader.GetFieldValue<DateTime>(9),
                    SuspectTimes = [.. addresses.Select((address, i) => Tuple.Create(SiloAddress.FromParsableString(address), times[i]))],
                };
                members.Add(Tuple.Create(entry, reader.GetInt32(12).ToString(System.Globalization.CultureInfo.InvariantCulture)));
            }
        }

        await transaction.CommitAsync().ConfigureAwait(false);
        return new MembershipTableData(members, new TableVersion(version, version.ToString(System.Globalization.CultureInfo.InvariantCulture)));
    }

    private static DateTime Utc(DateTime time) => time.Kind switch
    {
        DateTimeKind.Utc => time,
        DateTimeKind.Local => time.ToUniversalTime(),
        _ => DateTime.SpecifyKind(time, DateTimeKind.Utc),
    };
}
