// Aggregates over fused_states for the fleet's own base layer: cells driven through and places stood at.
using Dapper;
using Npgsql;

namespace FusionService.Storage.BaseLayer;

/// <summary>
/// Reads the fleet's base layer from <c>fused_states</c>: the grid cells its confident moving estimates fell into (the
/// roads it drives) and the cells where its estimates stood still for minutes (its stops). Both are one GROUP BY in
/// PostgreSQL over the stored estimates since a time; the <c>measured_at</c> bound lets the planner skip older daily
/// partitions.
/// </summary>
public sealed class BaseLayerRepository
{
    private const string ReferenceSql = """
        SELECT round(lat_deg::numeric, 1)::double precision FROM fused_states WHERE fleet_id = @FleetId AND measured_at >= @Since LIMIT 1
        """;

    private const string RoadsSql = """
        SELECT floor(lat_deg / @CellLatDeg)::bigint AS Row, floor(lon_deg / @CellLonDeg)::bigint AS Col,
               count(*) AS States, count(DISTINCT vehicle_id) AS Vehicles
        FROM fused_states
        WHERE fleet_id = @FleetId AND measured_at >= @Since
          AND abs(speed_mps) >= @MovingMps AND ellipse_major_m <= @MaxEllipseM
        GROUP BY 1, 2
        HAVING count(*) >= @MinStates
        ORDER BY 1, 2
        """;

    private const string StopsSql = """
        SELECT avg(lat_deg) AS LatDeg, avg(lon_deg) AS LonDeg,
               count(DISTINCT vehicle_id || ':' || (time_us / 60000000)::text) AS DwellMinutes,
               count(DISTINCT vehicle_id) AS Vehicles
        FROM fused_states
        WHERE fleet_id = @FleetId AND measured_at >= @Since
          AND abs(speed_mps) < @StandingMps AND ellipse_major_m <= @MaxEllipseM
        GROUP BY floor(lat_deg / @StopLatDeg), floor(lon_deg / @StopLonDeg)
        HAVING count(DISTINCT vehicle_id || ':' || (time_us / 60000000)::text) >= @MinDwellMinutes
        ORDER BY 3 DESC
        LIMIT @MaxStops
        """;

    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the repository.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public BaseLayerRepository(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
    }

    /// <summary>
    /// The latitude the grid's cell width is worked out at: one stored estimate's latitude since <paramref name="since"/>,
    /// rounded to 0.1 degree so that the grid stays put from one request to the next (the width of a cell changes by
    /// about 0.2 % per 0.1 degree at 45 degrees); null when the fleet has no estimate since then.
    /// </summary>
    /// <param name="fleetId">The fleet.</param>
    /// <param name="since">Oldest estimate time counted.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async Task<double?> ReferenceLatitudeAsync(Guid fleetId, DateTimeOffset since, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await connection.ExecuteScalarAsync<double?>(
                new CommandDefinition(ReferenceSql, new { FleetId = fleetId, Since = since }, cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    /// <summary>Grid cells (<paramref name="cellLatDeg"/> by <paramref name="cellLonDeg"/>) with at least
    /// <paramref name="minStates"/> estimates moving at <paramref name="movingMps"/> or faster whose 95 % ellipse's
    /// semi-major axis is at most <paramref name="maxEllipseM"/>, stored since <paramref name="since"/>.</summary>
    /// <param name="fleetId">The fleet.</param>
    /// <param name="since">Oldest estimate time counted.</param>
    /// <param name="cellLatDeg">Cell height, degrees of latitude.</param>
    /// <param name="cellLonDeg">Cell width, degrees of longitude.</param>
    /// <param name="movingMps">Least speed of a counted estimate, m/s.</param>
    /// <param name="maxEllipseM">Largest 95 % semi-major axis of a counted estimate, metres.</param>
    /// <param name="minStates">Least estimates per reported cell.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async Task<IReadOnlyList<RoadCellRow>> RoadCellsAsync(
        Guid fleetId, DateTimeOffset since, double cellLatDeg, double cellLonDeg, double movingMps, double maxEllipseM, int minStates,
        CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<RoadCellRow>(new CommandDefinition(
                RoadsSql,
                new { FleetId = fleetId, Since = since, CellLatDeg = cellLatDeg, CellLonDeg = cellLonDeg, MovingMps = movingMps, MaxEllipseM = maxEllipseM, MinStates = (long)minStates },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList();
        }
    }

    /// <summary>Stop cells (<paramref name="stopLatDeg"/> by <paramref name="stopLonDeg"/>) where estimates slower than
    /// <paramref name="standingMps"/> cover at least <paramref name="minDwellMinutes"/> vehicle-minutes since
    /// <paramref name="since"/>, longest first, at most <paramref name="maxStops"/>.</summary>
    /// <param name="fleetId">The fleet.</param>
    /// <param name="since">Oldest estimate time counted.</param>
    /// <param name="stopLatDeg">Stop cell height, degrees of latitude.</param>
    /// <param name="stopLonDeg">Stop cell width, degrees of longitude.</param>
    /// <param name="standingMps">Speed below which an estimate stands, m/s.</param>
    /// <param name="maxEllipseM">Largest 95 % semi-major axis of a counted estimate, metres.</param>
    /// <param name="minDwellMinutes">Least vehicle-minutes per reported stop.</param>
    /// <param name="maxStops">Most stops returned.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async Task<IReadOnlyList<StopRow>> StopsAsync(
        Guid fleetId, DateTimeOffset since, double stopLatDeg, double stopLonDeg, double standingMps, double maxEllipseM, int minDwellMinutes, int maxStops,
        CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<StopRow>(new CommandDefinition(
                StopsSql,
                new
                {
                    FleetId = fleetId, Since = since, StopLatDeg = stopLatDeg, StopLonDeg = stopLonDeg, StandingMps = standingMps,
                    MaxEllipseM = maxEllipseM, MinDwellMinutes = (long)minDwellMinutes, MaxStops = maxStops,
                },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList();
        }
    }
}
