// Counting duplicate deliveries, which the measurement log drops.
using FusionService.Estimation.Time;
using Npgsql;

namespace FusionService.Storage.Audit;

/// <summary>Adds to and reads <c>duplicate_counts</c> (migration 0004).</summary>
/// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
public sealed class DuplicateCountRepository(NpgsqlDataSource dataSource)
{
    private const string AddSql = """
        INSERT INTO duplicate_counts (fleet_id, vehicle_id, kind, day, count)
        SELECT $1, v, k, d, c
        FROM unnest($2::text[], $3::smallint[], $4::date[], $5::bigint[]) AS t (v, k, d, c)
        ON CONFLICT (fleet_id, vehicle_id, kind, day) DO UPDATE SET count = duplicate_counts.count + EXCLUDED.count
        """;

    private const string TotalsSql = """
        SELECT kind, sum(count)::bigint
        FROM duplicate_counts
        WHERE fleet_id = $1 AND vehicle_id = $2 AND day BETWEEN $3 AND $4
        GROUP BY kind
        ORDER BY kind
        """;

    private readonly NpgsqlDataSource _dataSource = dataSource ?? throw new ArgumentNullException(nameof(dataSource));

    /// <summary>
    /// Adds the counts of one fleet in one statement (entries with the same vehicle, kind and day are summed first).
    /// </summary>
    /// <param name="fleetId">Owning fleet; every entry's <see cref="DuplicateCount.FleetId"/> must equal it.</param>
    /// <param name="counts">Increments, each positive.</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    public async Task AddAsync(Guid fleetId, IEnumerable<DuplicateCount> counts, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(counts);
        var merged = new Dictionary<(string Vehicle, short Kind, DateOnly Day), long>();
        foreach (var c in counts)
        {
            if (c.FleetId != fleetId)
            {
                throw new ArgumentException("every count must belong to fleet " + fleetId, nameof(counts));
            }

            ArgumentOutOfRangeException.ThrowIfNegativeOrZero(c.Count, nameof(counts));
            var key = (c.VehicleId, c.Kind, c.Day);
            merged[key] = merged.GetValueOrDefault(key) + c.Count;
        }

        if (merged.Count == 0)
        {
            return;
        }

        await using var command = _dataSource.CreateCommand(AddSql);
        command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
        command.Parameters.Add(new NpgsqlParameter { Value = merged.Keys.Select(k => k.Vehicle).ToArray() });
        command.Parameters.Add(new NpgsqlParameter { Value = merged.Keys.Select(k => k.Kind).ToArray() });
        command.Parameters.Add(new NpgsqlParameter { Value = merged.Keys.Select(k => k.Day).ToArray() });
        command.Parameters.Add(new NpgsqlParameter { Value = merged.Values.ToArray() });
        await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
    }

    /// <summary>
    /// Duplicate deliveries per sensor kind of one vehicle over the UTC days that [<paramref name="fromUs"/>,
    /// <paramref name="toUs"/>) touches (whole days: the table counts per day).
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds, greater than <paramref name="fromUs"/>.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    /// <returns>Kind code to count; kinds without duplicates are absent.</returns>
    public async Task<IReadOnlyDictionary<short, long>> TotalsAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        var totals = new Dictionary<short, long>();
        if (toUs <= fromUs)
        {
            return totals;
        }

        await using var command = _dataSource.CreateCommand(TotalsSql);
        command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
        command.Parameters.Add(new NpgsqlParameter { Value = vehicleId });
        command.Parameters.Add(new NpgsqlParameter { Value = UnixMicroseconds.UtcDayOf(fromUs) });
        command.Parameters.Add(new NpgsqlParameter { Value = UnixMicroseconds.UtcDayOf(toUs - 1) });
        await using var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
        while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
        {
            totals[reader.GetInt16(0)] = reader.GetInt64(1);
        }

        return totals;
    }
}
