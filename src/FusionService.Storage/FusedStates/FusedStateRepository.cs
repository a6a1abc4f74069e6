// Reads of stored filter estimates.
using Dapper;
using FusionService.Storage.Bulk;
using FusionService.Storage.Time;
using Npgsql;

namespace FusionService.Storage.FusedStates;

/// <summary>Queries on <c>fused_states</c>.</summary>
public sealed class FusedStateRepository
{
    private const string Columns = """
        fleet_id AS FleetId, vehicle_id AS VehicleId, time_us AS TimeUs, lat_deg AS LatDeg, lon_deg AS LonDeg,
        heading_rad AS HeadingRad, speed_mps AS SpeedMps, yaw_rate_rps AS YawRateRps, accel_mps2 AS AccelMps2,
        gyro_bias_rps AS GyroBiasRps, wheel_scale AS WheelScale, covariance AS Covariance,
        ellipse_major_m AS EllipseMajorM, ellipse_minor_m AS EllipseMinorM,
        ellipse_orientation_rad AS EllipseOrientationRad
        """;

    private const string RangeSql = "SELECT " + Columns + """

        FROM fused_states
        WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId
          AND time_us >= @FromUs AND time_us < @ToUs
          AND measured_at >= @FromAt AND measured_at < @ToAt
        ORDER BY time_us
        """;

    private const string LatestSql = "SELECT DISTINCT ON (vehicle_id) " + Columns + """

        FROM fused_states
        WHERE fleet_id = @FleetId
        ORDER BY vehicle_id, time_us DESC
        """;

    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the repository.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public FusedStateRepository(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
        DapperTypeHandlers.EnsureRegistered();
    }

    /// <summary>States of one vehicle with <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/>,
    /// in time order.</summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async Task<IReadOnlyList<FusedStateRow>> ReadAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        if (toUs <= fromUs)
        {
            return [];
        }

        var parameters = TimeRangeParameters.For(fleetId, vehicleId, fromUs, toUs);
        return await QueryAsync(RangeSql, parameters, cancellationToken).ConfigureAwait(false);
    }

    /// <summary>The newest stored state of every vehicle of <paramref name="fleetId"/> that has one, ordered by
    /// vehicle id (ordinal byte order of the database's C.UTF-8 collation on the embedded cluster).</summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public Task<IReadOnlyList<FusedStateRow>> LatestFusedStatesAsync(Guid fleetId, CancellationToken cancellationToken = default) =>
        QueryAsync(LatestSql, new { FleetId = fleetId }, cancellationToken);

    private async Task<IReadOnlyList<FusedStateRow>> QueryAsync(string sql, object parameters, CancellationToken cancellationToken)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<FusedStateRow>(
                new CommandDefinition(sql, parameters, cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList();
        }
    }
}
