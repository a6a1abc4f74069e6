// Streaming range reads of one vehicle's stored measurements and fused states, for the track history endpoints.
using System.Globalization;
using System.Runtime.CompilerServices;
using Dapper;
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Bulk;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using FusionService.Storage.Time;
using Npgsql;

namespace FusionService.Storage.History;

/// <summary>
/// Reads one vehicle's stored rows over a time range row by row (a data reader, not a list), so that a day of
/// 600,000 measurements never sits in memory as row objects.
/// </summary>
public sealed class TrackHistoryReader
{
    private const string MeasurementSql = """
        SELECT kind, time_us, message_key, v0, v1, v2, outcome, nis, track_reset
        FROM judged_measurements(@FleetId, @VehicleId, @FromUs, @ToUs, @FromAt, @ToAt)
        WHERE kind >= @MinKind AND kind <= @MaxKind
        ORDER BY time_us, kind, message_key
        """;

    // COPY takes no parameters: the numbers are formatted into the text, the vehicle id (free text) comes in through a
    // transaction-local setting, so no caller's text is ever part of the statement.
    private const string ReplayCopySql = """
        COPY (
            SELECT kind, time_us, message_key, v0, v1, v2
            FROM measurements
            WHERE fleet_id = '{0}'::uuid AND vehicle_id = current_setting('fusion.replay_vehicle')
              AND time_us >= {1} AND time_us < {2}
              AND measured_at >= '{3}'::timestamptz AND measured_at < '{4}'::timestamptz
              AND kind >= {5} AND kind <= {6}
              AND outcome <> {7}
            ORDER BY time_us, kind, message_key
        ) TO STDOUT (FORMAT BINARY)
        """;

    private const string FusedSql = """
        SELECT fleet_id AS FleetId, vehicle_id AS VehicleId, time_us AS TimeUs, lat_deg AS LatDeg, lon_deg AS LonDeg,
               heading_rad AS HeadingRad, speed_mps AS SpeedMps, yaw_rate_rps AS YawRateRps, accel_mps2 AS AccelMps2,
               gyro_bias_rps AS GyroBiasRps, wheel_scale AS WheelScale, covariance AS Covariance,
               ellipse_major_m AS EllipseMajorM, ellipse_minor_m AS EllipseMinorM,
               ellipse_orientation_rad AS EllipseOrientationRad
        FROM fused_states
        WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId
          AND time_us >= @FromUs AND time_us < @ToUs
          AND measured_at >= @FromAt AND measured_at < @ToAt
        ORDER BY time_us
        """;

    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the reader.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public TrackHistoryReader(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
        DapperTypeHandlers.EnsureRegistered();
    }

    /// <summary>
    /// Measurements of one vehicle with <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/> and
    /// <paramref name="minKind"/> &lt;= kind &lt;= <paramref name="maxKind"/>, in canonical order (time, kind, message key).
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="minKind">Smallest kind code wanted.</param>
    /// <param name="maxKind">Largest kind code wanted.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async IAsyncEnumerable<StoredMeasurementValues> StreamMeasurementsAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, short minKind = 0, short maxKind = short.MaxValue,
        [EnumeratorCancellation] CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        if (toUs <= fromUs)
        {
            yield break;
        }

        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var command = new NpgsqlCommand(MeasurementSql, connection);
            await using (command.ConfigureAwait(false))
            {
                command.Parameters.AddWithValue("FleetId", fleetId);
                command.Parameters.AddWithValue("VehicleId", vehicleId);
                command.Parameters.AddWithValue("FromUs", fromUs);
                command.Parameters.AddWithValue("ToUs", toUs);
                command.Parameters.AddWithValue("FromAt", UnixMicroseconds.ToDateTimeOffset(fromUs));
                command.Parameters.AddWithValue("ToAt", UnixMicroseconds.ToDateTimeOffset(toUs));
                command.Parameters.AddWithValue("MinKind", minKind);
                command.Parameters.AddWithValue("MaxKind", maxKind);
                var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
                await using (reader.ConfigureAwait(false))
                {
                    while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                    {
                        yield return new StoredMeasurementValues(
                            reader.GetInt16(0),
                            reader.GetInt64(1),
                            reader.GetInt64(2),
                            reader.GetDouble(3),
                            reader.IsDBNull(4) ? null : reader.GetDouble(4),
                            reader.IsDBNull(5) ? null : reader.GetDouble(5),
                            OutcomeCodes.FromCode(reader.GetInt16(6)),
                            reader.IsDBNull(7) ? null : reader.GetDouble(7),
                            reader.GetBoolean(8));
                    }
                }
            }
        }
    }

    /// <summary>
    /// The measurements a replay of the filter needs (kind, time, key and values; duplicates left out) of one vehicle with
    /// <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/> and <paramref name="minKind"/> &lt;= kind &lt;=
    /// <paramref name="maxKind"/>, in canonical order (time, kind, message key), handed to <paramref name="onRow"/> one by
    /// one. Read by a binary <c>COPY ... TO STDOUT</c> decoded from the raw stream (<see cref="ReplayCopyDecoder"/>), which
    /// costs far less per row than a data reader (see docs/benchmarks.md, smoothed track of a vehicle-day).
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="minKind">Smallest kind code wanted.</param>
    /// <param name="maxKind">Largest kind code wanted.</param>
    /// <param name="onRow">Receives each row, in order.</param>
    /// <param name="cancellationToken">Cancels the export.</param>
    /// <returns>Number of rows handed over.</returns>
    public async Task<int> ReadReplayMeasurementsAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, short minKind, short maxKind, Action<ReplayMeasurementValues> onRow,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        ArgumentNullException.ThrowIfNull(onRow);
        if (toUs <= fromUs)
        {
            return 0;
        }

        string sql = string.Format(
            CultureInfo.InvariantCulture,
            ReplayCopySql,
            fleetId.ToString("D"),
            fromUs,
            toUs,
            UnixMicroseconds.ToDateTimeUtc(fromUs).ToString("yyyy-MM-dd HH:mm:ss.ffffff+00", CultureInfo.InvariantCulture),
            UnixMicroseconds.ToDateTimeUtc(toUs).ToString("yyyy-MM-dd HH:mm:ss.ffffff+00", CultureInfo.InvariantCulture),
            minKind,
            maxKind,
            OutcomeCodes.ToCode(OutcomeKind.Duplicate));
        int count = 0;
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                // The rows must stream in index order as the scan finds them (the replay starts on the first ones). Once
                // ANALYZE knows that one vehicle's window is much of a partition (a small fleet, a long window), the planner
                // prefers a parallel sequential scan with a sort spilled to disk: about twice the CPU, and no row before the
                // sort ends. The settings below, local to this transaction, leave it the ordered index scan.
                var setting = new NpgsqlCommand(
                    "SELECT set_config('fusion.replay_vehicle', @VehicleId, true), set_config('enable_seqscan', 'off', true), "
                    + "set_config('enable_bitmapscan', 'off', true), set_config('max_parallel_workers_per_gather', '0', true)",
                    connection,
                    transaction);
                await using (setting.ConfigureAwait(false))
                {
                    setting.Parameters.AddWithValue("VehicleId", vehicleId);
                    await setting.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                var copy = await connection.BeginRawBinaryCopyAsync(sql, cancellationToken).ConfigureAwait(false);
                await using (copy.ConfigureAwait(false))
                {
                    count = await new ReplayCopyDecoder(copy).DecodeAsync(onRow, cancellationToken).ConfigureAwait(false);
                }

                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
            }
        }

        return count;
    }

    /// <summary>Fused states of one vehicle with <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/>, in time order.</summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async IAsyncEnumerable<FusedStateRow> StreamFusedStatesAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, [EnumeratorCancellation] CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        if (toUs <= fromUs)
        {
            yield break;
        }

        var parameters = TimeRangeParameters.For(fleetId, vehicleId, fromUs, toUs);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await foreach (var row in connection.QueryUnbufferedAsync<FusedStateRow>(FusedSql, parameters).WithCancellation(cancellationToken).ConfigureAwait(false))
            {
                yield return row;
            }
        }
    }
}
