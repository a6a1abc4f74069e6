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
    // order of first_us, so the windows arrive one after the other. With several connections, connection @Index reads the
    // chunks whose chunk_id leaves @Index modulo @Connections; the reader merges the connections' chunks back into the one
    // order (first_us, chunk_id), so how they are dealt out does not change what is read. The outcomes go over only for a
    // chunk that holds a duplicate (the only outcome the read looks at): array_send costs about the same per element for
    // every column (docs/storage-cost.md), and most chunks hold none.
    private const string ReplayChunksSql = """
        SELECT first_us, chunk_id, count, array_send(time_us), array_send(kind), array_send(message_key), array_send(v0),
               array_send(v1), array_send(v2), CASE WHEN @Duplicate = ANY (outcome) THEN array_send(outcome) END
        FROM measurement_chunks
        WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId
          AND first_us > @FromUs - 600000000 AND first_us < @ToUs AND last_us >= @FromUs
          AND chunk_id % @Connections = @Index
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
    private readonly int _replayReadConnections;

    /// <summary>Creates the reader.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public TrackHistoryReader(NpgsqlDataSource dataSource)
        : this(dataSource, 1)
    {
    }

    /// <summary>Creates the reader.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    /// <param name="replayReadConnections">
    /// Connections one replay read uses at once (1 to 8): with more than one, the vehicle's chunks are dealt out over them
    /// and their PostgreSQL backends work side by side, which shortens the read where processors are free (the processor
    /// time is not less). Each read holds that many connections of the pool at once.
    /// </param>
    /// <exception cref="ArgumentOutOfRangeException"><paramref name="replayReadConnections"/> is not within 1 to 8.</exception>
    public TrackHistoryReader(NpgsqlDataSource dataSource, int replayReadConnections)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        ArgumentOutOfRangeException.ThrowIfLessThan(replayReadConnections, 1);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(replayReadConnections, 8);
        _dataSource = dataSource;
        _replayReadConnections = replayReadConnections;
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
    /// than one commit wrote (late or resent data), so at most one window's measurements are held at a time (and, when the
    /// reader was created with several replay-read connections, one chunk per connection in the driver's buffer).
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
        var columns = new ReplayColumns();
        var streams = new List<ChunkStream>(_replayReadConnections);
        int count = 0;
        try
        {
            // With several connections, all read under the first one's snapshot: a fold of closed windows
            // (MeasurementChunkFolder) replaces chunks by one with another chunk_id, and connections with snapshots of
            // their own could see a window's chunks both before and after it, or neither.
            string? snapshot = null;
            for (int i = 0; i < _replayReadConnections; i++)
            {
                var stream = await ChunkStream.OpenAsync(
                    _dataSource, fleetId, vehicleId, fromUs, toUs, duplicate, _replayReadConnections, i, snapshot, cancellationToken).ConfigureAwait(false);
                streams.Add(stream);
                snapshot ??= stream.Snapshot;
            }

            // The chunks come back in the one order of (first_us, chunk_id), taken from whichever connection holds the
            // next; the others' backends go on producing their next chunks meanwhile.
            while (Next(streams) is { } stream)
            {
                var reader = stream.Reader;
                count += Hand(window.Begin(reader.GetInt64(0)), onRow);
                await afterRows(cancellationToken).ConfigureAwait(false);
                int n = columns.Decode(reader);
                for (int i = 0; i < n; i++)
                {
                    if (columns.Time[i] >= fromUs && columns.Time[i] < toUs && columns.Kind[i] >= minKind && columns.Kind[i] <= maxKind
                        && (!columns.HasOutcomes || columns.Outcome[i] != duplicate))
                    {
                        window.Add(new ReplayMeasurementValues(columns.Kind[i], columns.Time[i], columns.Key[i], columns.V0[i], columns.V1[i], columns.V2[i]));
                    }
                }

                await stream.AdvanceAsync(cancellationToken).ConfigureAwait(false);
            }
        }
        finally
        {
            foreach (var stream in streams)
            {
                await stream.DisposeAsync().ConfigureAwait(false);
            }
        }

        return count + Hand(window.Close(), onRow);
    }

    // The stream whose current chunk comes first in (first_us, chunk_id) order; null when every stream has ended.
    private static ChunkStream? Next(List<ChunkStream> streams)
    {
        ChunkStream? next = null;
        foreach (var stream in streams)
        {
            if (stream.HasRow && (next is null || (stream.FirstUs, stream.ChunkId).CompareTo((next.FirstUs, next.ChunkId)) < 0))
            {
                next = stream;
            }
        }

        return next;
    }

    private static int Hand(List<ReplayMeasurementValues> rows, Action<ReplayMeasurementValues> onRow)
    {
        foreach (var row in rows)
        {
            onRow(row);
        }

        return rows.Count;
    }

    // One connection's query of a replay read, positioned on its current chunk.
    private sealed class ChunkStream : IAsyncDisposable
    {
        private readonly NpgsqlConnection _connection;
        private readonly NpgsqlCommand _command;
        private NpgsqlDataReader? _reader;

        private ChunkStream(NpgsqlConnection connection, NpgsqlCommand command)
        {
            _connection = connection;
            _command = command;
        }

        public NpgsqlDataReader Reader => _reader ?? throw new InvalidOperationException("the chunk query has not started");

        public bool HasRow { get; private set; }

        public long FirstUs { get; private set; }

        public long ChunkId { get; private set; }

        // The snapshot this stream's transaction exported for the others (first of several connections only).
        public string? Snapshot { get; private set; }

        // With several connections, the first exports its repeatable-read snapshot and the others read under it
        // (`snapshot`, null for the first).
        public static async Task<ChunkStream> OpenAsync(
            NpgsqlDataSource dataSource, Guid fleetId, string vehicleId, long fromUs, long toUs, short duplicate,
            int connections, int index, string? snapshot, CancellationToken cancellationToken)
        {
            var connection = await dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
            string? exported = null;
            NpgsqlTransaction? transaction = null;
            if (connections > 1)
            {
                try
                {
                    transaction = await connection.BeginTransactionAsync(System.Data.IsolationLevel.RepeatableRead, cancellationToken).ConfigureAwait(false);
                    await using var share = new NpgsqlCommand(
                        snapshot is null ? "SELECT pg_export_snapshot()" : "SET TRANSACTION SNAPSHOT '" + snapshot.Replace("'", "''", StringComparison.Ordinal) + "'",
                        connection,
                        transaction);
                    exported = (string?)await share.ExecuteScalarAsync(cancellationToken).ConfigureAwait(false);
                }
                catch
                {
                    await connection.DisposeAsync().ConfigureAwait(false);
                    throw;
                }
            }

            var command = new NpgsqlCommand(ReplayChunksSql, connection, transaction);
            command.Parameters.AddWithValue("FleetId", fleetId);
            command.Parameters.AddWithValue("VehicleId", vehicleId);
            command.Parameters.AddWithValue("FromUs", fromUs);
            command.Parameters.AddWithValue("ToUs", toUs);
            command.Parameters.AddWithValue("Duplicate", duplicate);
            command.Parameters.AddWithValue("Connections", connections);
            command.Parameters.AddWithValue("Index", index);
            var stream = new ChunkStream(connection, command) { Snapshot = exported };
            try
            {
                stream._reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
                await stream.AdvanceAsync(cancellationToken).ConfigureAwait(false);
                return stream;
            }
            catch
            {
                await stream.DisposeAsync().ConfigureAwait(false);
                throw;
            }
        }

        public async Task AdvanceAsync(CancellationToken cancellationToken)
        {
            HasRow = await Reader.ReadAsync(cancellationToken).ConfigureAwait(false);
            if (HasRow)
            {
                FirstUs = Reader.GetInt64(0);
                ChunkId = Reader.GetInt64(1);
            }
        }

        public async ValueTask DisposeAsync()
        {
            if (_reader is not null)
            {
                await _reader.DisposeAsync().ConfigureAwait(false);
            }

            await _command.DisposeAsync().ConfigureAwait(false);
            await _connection.DisposeAsync().ConfigureAwait(false);
        }
    }

    // The decoded arrays of one chunk of a replay read, reused from chunk to chunk.
    private sealed class ReplayColumns
    {
        public long[] Time = [];
        public short[] Kind = [];
        public long[] Key = [];
        public double[] V0 = [];
        public double?[] V1 = [];
        public double?[] V2 = [];
        public short[] Outcome = [];

        // False when the chunk holds no duplicate: its outcomes were not sent.
        public bool HasOutcomes;

        private byte[] _buffer = [];

        public int Decode(NpgsqlDataReader reader)
        {
            int n = reader.GetInt32(2);
            if (Time.Length < n)
            {
                Time = new long[n];
                Kind = new short[n];
                Key = new long[n];
                V0 = new double[n];
                V1 = new double?[n];
                V2 = new double?[n];
                Outcome = new short[n];
            }

            ArraySendDecoder.Int64(Bytes(reader, 3), Time.AsSpan(0, n));
            ArraySendDecoder.Int16(Bytes(reader, 4), Kind.AsSpan(0, n));
            ArraySendDecoder.Int64(Bytes(reader, 5), Key.AsSpan(0, n));
            ArraySendDecoder.Float64(Bytes(reader, 6), V0.AsSpan(0, n));
            ArraySendDecoder.NullableFloat64(Bytes(reader, 7), V1.AsSpan(0, n));
            ArraySendDecoder.NullableFloat64(Bytes(reader, 8), V2.AsSpan(0, n));
            HasOutcomes = !reader.IsDBNull(9);
            if (HasOutcomes)
            {
                ArraySendDecoder.Int16(Bytes(reader, 9), Outcome.AsSpan(0, n));
            }

            return n;
        }

        // A column's bytes copied into one buffer reused for every column and chunk: a chunk's arrays are about 100 KB
        // each, and a new array per column would be a large-object allocation every time.
        private ReadOnlySpan<byte> Bytes(NpgsqlDataReader reader, int ordinal)
        {
            int length = checked((int)reader.GetBytes(ordinal, 0, null, 0, 0));
            if (_buffer.Length < length)
            {
                _buffer = new byte[length];
            }

            reader.GetBytes(ordinal, 0, _buffer, 0, length);
            return _buffer.AsSpan(0, length);
        }
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
