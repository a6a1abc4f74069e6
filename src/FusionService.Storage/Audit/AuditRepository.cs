// Read-only queries behind the diagnostics and explanations of one vehicle.
using Dapper;
using FusionService.Estimation.Time;
using FusionService.Storage.Bulk;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using FusionService.Storage.Time;
using Npgsql;

namespace FusionService.Storage.Audit;

/// <summary>
/// Aggregates over the stored measurements (<c>judged_measurements</c>) and <c>fused_states</c> of one vehicle in a half-open time range
/// [from, to) of measurement time (Unix microseconds), for the diagnostics endpoint.
/// </summary>
public sealed class AuditRepository
{
    private const string Range = "\n    fleet_id = @FleetId AND vehicle_id = @VehicleId"
        + "\n    AND time_us >= @FromUs AND time_us < @ToUs"
        + "\n    AND measured_at >= @FromAt AND measured_at < @ToAt\n";

    // The measurements of the range, each with its newest verdict (migration 0013).
    private const string Judged = "judged_measurements(@FleetId, @VehicleId, @FromUs, @ToUs, @FromAt, @ToAt)";

    private const string LatencySql = """
        SELECT kind AS Kind, count(*) AS Count,
               percentile_cont(0.50) WITHIN GROUP (ORDER BY latency_ms) AS P50Ms,
               percentile_cont(0.95) WITHIN GROUP (ORDER BY latency_ms) AS P95Ms,
               percentile_cont(0.99) WITHIN GROUP (ORDER BY latency_ms) AS P99Ms
        FROM (SELECT kind, (extract(epoch FROM received_at - measured_at) * 1000)::double precision AS latency_ms
              FROM
        """ + " " + Judged + """
        ) AS l
        GROUP BY kind
        ORDER BY kind
        """;

    private const string FixTimesSql = "SELECT time_us FROM " + Judged + " WHERE kind = 0 ORDER BY time_us";

    private const string SpeedsSql = "SELECT time_us AS TimeUs, speed_mps AS SpeedMps FROM fused_states WHERE " + Range + " ORDER BY time_us";

    private const string NewestStateSql = """
        SELECT fleet_id AS FleetId, vehicle_id AS VehicleId, time_us AS TimeUs, lat_deg AS LatDeg, lon_deg AS LonDeg,
               heading_rad AS HeadingRad, speed_mps AS SpeedMps, yaw_rate_rps AS YawRateRps, accel_mps2 AS AccelMps2,
               gyro_bias_rps AS GyroBiasRps, wheel_scale AS WheelScale, covariance AS Covariance,
               ellipse_major_m AS EllipseMajorM, ellipse_minor_m AS EllipseMinorM,
               ellipse_orientation_rad AS EllipseOrientationRad
        FROM fused_states WHERE
        """ + Range + """

        ORDER BY time_us DESC
        LIMIT 1
        """;

    private const string AnyBeforeSql = """
        SELECT EXISTS (SELECT 1 FROM measurement_chunks
                       WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId AND first_us < @TimeUs)
        """;

    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the repository.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public AuditRepository(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
        DapperTypeHandlers.EnsureRegistered();
    }

    /// <summary>
    /// Every measurement of the range with its latest verdict, in canonical order (time, kind, message key), streamed so
    /// that a long range does not have to fit in memory.
    /// </summary>
    public async IAsyncEnumerable<VerdictSample> VerdictsAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, [System.Runtime.CompilerServices.EnumeratorCancellation] CancellationToken cancellationToken = default)
    {
        await foreach (var m in MeasurementChunkReader.ReadAsync(_dataSource, fleetId, vehicleId, fromUs, toUs, cancellationToken).ConfigureAwait(false))
        {
            var r = m.Row;
            yield return new VerdictSample(r.Kind, r.TimeUs, r.V0, r.V1, r.Outcome, r.Nis, r.TrackReset, m.W0, m.W1);
        }
    }

    /// <summary>Arrival latency percentiles per sensor kind, over every stored measurement of the range.</summary>
    public Task<IReadOnlyList<LatencySummary>> LatencyAsync(Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default) =>
        QueryAsync<LatencySummary>(LatencySql, fleetId, vehicleId, fromUs, toUs, cancellationToken);

    /// <summary>
    /// The measurements of the range in canonical order (time, kind, message key), streamed: a replay over hours of
    /// data then holds one row at a time.
    /// </summary>
    public async IAsyncEnumerable<MeasurementRow> MeasurementsAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, [System.Runtime.CompilerServices.EnumeratorCancellation] CancellationToken cancellationToken = default)
    {
        await foreach (var m in MeasurementChunkReader.ReadAsync(_dataSource, fleetId, vehicleId, fromUs, toUs, cancellationToken).ConfigureAwait(false))
        {
            yield return m.Row;
        }
    }

    /// <summary>Times of every stored GNSS position fix (whatever its outcome), ascending, Unix microseconds.</summary>
    public Task<IReadOnlyList<long>> GnssFixTimesAsync(Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default) =>
        QueryAsync<long>(FixTimesSql, fleetId, vehicleId, fromUs, toUs, cancellationToken);

    /// <summary>Speeds of the stored fused states, in time order.</summary>
    public Task<IReadOnlyList<SpeedSample>> FusedSpeedsAsync(Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default) =>
        QueryAsync<SpeedSample>(SpeedsSql, fleetId, vehicleId, fromUs, toUs, cancellationToken);

    /// <summary>The newest stored fused state of the range, or null when it has none.</summary>
    public async Task<FusedStateRow?> NewestFusedStateAsync(Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default)
    {
        var rows = await QueryAsync<FusedStateRow>(NewestStateSql, fleetId, vehicleId, fromUs, toUs, cancellationToken).ConfigureAwait(false);
        return rows is [var newest] ? newest : null;
    }

    /// <summary>Whether the vehicle has any stored measurement before <paramref name="timeUs"/>.</summary>
    public async Task<bool> AnyMeasurementBeforeAsync(Guid fleetId, string vehicleId, long timeUs, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await connection.ExecuteScalarAsync<bool>(new CommandDefinition(
                AnyBeforeSql,
                new { FleetId = fleetId, VehicleId = vehicleId, TimeUs = timeUs, At = UnixMicroseconds.ToDateTimeOffset(timeUs) },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    private async Task<IReadOnlyList<T>> QueryAsync<T>(string sql, Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        if (toUs <= fromUs)
        {
            return [];
        }

        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<T>(new CommandDefinition(
                sql, TimeRangeParameters.For(fleetId, vehicleId, fromUs, toUs), cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList();
        }
    }
}
