// Streaming range reads of one vehicle's stored measurements and fused states, for the track history endpoints.
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
    // The chunks that can hold a time in [from, to): a chunk spans at most one ten-minute window (migration 0013). In
    // order of first_us, so the windows arrive one after the other.
    private const string ReplayChunksSql = """
        SELECT first_us, count, array_send(time_us), array_send(kind), array_send(message_key), array_send(v0),
               array_send(v1), array_send(v2), array_send(outcome)
        FROM measurement_chunks
        WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId
          AND first_us > @FromUs - 600000000 AND first_us < @ToUs AND last_us >= @FromUs
        ORDER BY first_us, chunk_id
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
        await foreach (var m in MeasurementChunkReader.ReadAsync(_dataSource, fleetId, vehicleId, fromUs, toUs, cancellationToken).ConfigureAwait(false))
        {
            var r = m.Row;
            if (r.Kind >= minKind && r.Kind <= maxKind)
            {
                yield return new StoredMeasurementValues(r.Kind, r.TimeUs, r.MessageKey, r.V0, r.V1, r.V2, r.Outcome, r.Nis, r.TrackReset);
            }
        }
    }

    /// <summary>
    /// The measurements a replay of the filter needs (kind, time, key and values; duplicates left out) of one vehicle with
    /// <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/> and <paramref name="minKind"/> &lt;= kind &lt;=
    /// <paramref name="maxKind"/>, in canonical order (time, kind, message key), handed to <paramref name="onRow"/> one by
    /// one. Reads the vehicle's chunks in order of their first time and sorts only within a ten-minute window that more
    /// than one commit wrote (late or resent data), so at most one window's measurements are held at a time.
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="minKind">Smallest kind code wanted.</param>
    /// <param name="maxKind">Largest kind code wanted.</param>
    /// <param name="onRow">Receives each row, in order.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    /// <returns>Number of rows handed over.</returns>
    public Task<int> ReadReplayMeasurementsAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, short minKind, short maxKind, Action<ReplayMeasurementValues> onRow,
        CancellationToken cancellationToken = default) =>
        ReadReplayMeasurementsAsync(fleetId, vehicleId, fromUs, toUs, minKind, maxKind, onRow, static _ => ValueTask.CompletedTask, cancellationToken);

    /// <summary>
    /// As <see cref="ReadReplayMeasurementsAsync(Guid, string, long, long, short, short, Action{ReplayMeasurementValues}, CancellationToken)"/>,
    /// awaiting <paramref name="afterRows"/> after each group of rows handed over (one stored chunk's, at most a ten-minute
    /// window's), so that a consumer slower than the read can make it wait without blocking a thread.
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="minKind">Smallest kind code wanted.</param>
    /// <param name="maxKind">Largest kind code wanted.</param>
    /// <param name="onRow">Receives each row, in order.</param>
    /// <param name="afterRows">Awaited after each group of rows handed over.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    /// <returns>Number of rows handed over.</returns>
    public async Task<int> ReadReplayMeasurementsAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, short minKind, short maxKind, Action<ReplayMeasurementValues> onRow,
        Func<CancellationToken, ValueTask> afterRows, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        ArgumentNullException.ThrowIfNull(onRow);
        ArgumentNullException.ThrowIfNull(afterRows);
        if (toUs <= fromUs)
        {
            return 0;
        }

        short duplicate = OutcomeCodes.ToCode(OutcomeKind.Duplicate);
        var window = new ChunkWindow<ReplayMeasurementValues>(static (a, b) =>
        {
            int c = a.TimeUs.CompareTo(b.TimeUs);
            if (c != 0)
            {
                return c;
            }

            c = a.Kind.CompareTo(b.Kind);
            return c != 0 ? c : a.MessageKey.CompareTo(b.MessageKey);
        });
        int count = 0;
        long[] time = [], key = [];
        short[] kind = [], outcome = [];
        double[] v0 = [];
        double?[] v1 = [], v2 = [];
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var command = new NpgsqlCommand(ReplayChunksSql, connection);
            await using (command.ConfigureAwait(false))
            {
                command.Parameters.AddWithValue("FleetId", fleetId);
                command.Parameters.AddWithValue("VehicleId", vehicleId);
                command.Parameters.AddWithValue("FromUs", fromUs);
                command.Parameters.AddWithValue("ToUs", toUs);
                var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
                await using (reader.ConfigureAwait(false))
                {
                    while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                    {
                        count += Hand(window.Begin(reader.GetInt64(0)), onRow);
                        await afterRows(cancellationToken).ConfigureAwait(false);
                        int n = reader.GetInt32(1);
                        if (time.Length < n)
                        {
                            time = new long[n];
                            kind = new short[n];
                            key = new long[n];
                            v0 = new double[n];
                            v1 = new double?[n];
                            v2 = new double?[n];
                            outcome = new short[n];
                        }

                        ArraySendDecoder.Int64(reader.GetFieldValue<byte[]>(2), time.AsSpan(0, n));
                        ArraySendDecoder.Int16(reader.GetFieldValue<byte[]>(3), kind.AsSpan(0, n));
                        ArraySendDecoder.Int64(reader.GetFieldValue<byte[]>(4), key.AsSpan(0, n));
                        ArraySendDecoder.Float64(reader.GetFieldValue<byte[]>(5), v0.AsSpan(0, n));
                        ArraySendDecoder.NullableFloat64(reader.GetFieldValue<byte[]>(6), v1.AsSpan(0, n));
                        ArraySendDecoder.NullableFloat64(reader.GetFieldValue<byte[]>(7), v2.AsSpan(0, n));
                        ArraySendDecoder.Int16(reader.GetFieldValue<byte[]>(8), outcome.AsSpan(0, n));
                        for (int i = 0; i < n; i++)
                        {
                            if (time[i] >= fromUs && time[i] < toUs && kind[i] >= minKind && kind[i] <= maxKind && outcome[i] != duplicate)
                            {
                                window.Add(new ReplayMeasurementValues(kind[i], time[i], key[i], v0[i], v1[i], v2[i]));
                            }
                        }
                    }
                }
            }
        }

        return count + Hand(window.Close(), onRow);
    }

    private static int Hand(List<ReplayMeasurementValues> rows, Action<ReplayMeasurementValues> onRow)
    {
        foreach (var row in rows)
        {
            onRow(row);
        }

        return rows.Count;
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
