// Streams one vehicle's stored measurements with their newest verdicts from its chunks, in canonical order.
using System.Runtime.CompilerServices;
using FusionService.Estimation.Time;
using Npgsql;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Reads one vehicle's chunks (migration 0013) over a time range in order of their first time and hands over every
/// measurement in the range with its newest verdict, in canonical order (time, kind, message key), one ten-minute window
/// at a time (<see cref="ChunkWindow{T}"/>). The arrays come in PostgreSQL's binary array form (<c>array_send</c>) and
/// are decoded by <see cref="ArraySendDecoder"/>.
/// </summary>
public static class MeasurementChunkReader
{
    private const string ChunksSql = """
        SELECT first_us, count, array_send(time_us), array_send(kind), array_send(message_key), array_send(received_us),
               array_send(v0), array_send(v1), array_send(v2), array_send(flags), array_send(outcome), array_send(nis),
               array_send(track_reset), array_send(w0), array_send(w1)
        FROM measurement_chunks
        WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId
          AND first_us > @FromUs - 600000000 AND first_us < @ToUs AND last_us >= @FromUs
        ORDER BY first_us, chunk_id
        """;

    /// <summary>
    /// The measurements of one vehicle with <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/>, each with its
    /// newest verdict, in canonical order.
    /// </summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public static async IAsyncEnumerable<JudgedMeasurement> ReadAsync(
        NpgsqlDataSource dataSource, Guid fleetId, string vehicleId, long fromUs, long toUs,
        [EnumeratorCancellation] CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        ArgumentNullException.ThrowIfNull(vehicleId);
        if (toUs <= fromUs)
        {
            yield break;
        }

        var window = new ChunkWindow<JudgedMeasurement>(static (a, b) => MeasurementChunks.CompareCanonical(a.Row, b.Row));
        var c = new Columns();
        var connection = await dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var command = new NpgsqlCommand(ChunksSql, connection);
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
                        foreach (var m in window.Begin(reader.GetInt64(0)))
                        {
                            yield return m;
                        }

                        int n = c.Decode(reader);
                        for (int i = 0; i < n; i++)
                        {
                            if (c.Time[i] >= fromUs && c.Time[i] < toUs)
                            {
                                window.Add(c.At(fleetId, vehicleId, i));
                            }
                        }
                    }
                }
            }
        }

        foreach (var m in window.Close())
        {
            yield return m;
        }
    }

    // The decoded arrays of one chunk, reused from chunk to chunk.
    private sealed class Columns
    {
        public long[] Time = [];
        private short[] _kind = [];
        private long[] _key = [];
        private long[] _received = [];
        private double[] _v0 = [];
        private double?[] _v1 = [];
        private double?[] _v2 = [];
        private int[] _flags = [];
        private short[] _outcome = [];
        private double?[] _nis = [];
        private bool[] _reset = [];
        private float?[] _w0 = [];
        private float?[] _w1 = [];

        public int Decode(NpgsqlDataReader reader)
        {
            int n = reader.GetInt32(1);
            if (Time.Length < n)
            {
                Time = new long[n];
                _kind = new short[n];
                _key = new long[n];
                _received = new long[n];
                _v0 = new double[n];
                _v1 = new double?[n];
                _v2 = new double?[n];
                _flags = new int[n];
                _outcome = new short[n];
                _nis = new double?[n];
                _reset = new bool[n];
                _w0 = new float?[n];
                _w1 = new float?[n];
            }

            ArraySendDecoder.Int64(reader.GetFieldValue<byte[]>(2), Time.AsSpan(0, n));
            ArraySendDecoder.Int16(reader.GetFieldValue<byte[]>(3), _kind.AsSpan(0, n));
            ArraySendDecoder.Int64(reader.GetFieldValue<byte[]>(4), _key.AsSpan(0, n));
            ArraySendDecoder.Int64(reader.GetFieldValue<byte[]>(5), _received.AsSpan(0, n));
            ArraySendDecoder.Float64(reader.GetFieldValue<byte[]>(6), _v0.AsSpan(0, n));
            ArraySendDecoder.NullableFloat64(reader.GetFieldValue<byte[]>(7), _v1.AsSpan(0, n));
            ArraySendDecoder.NullableFloat64(reader.GetFieldValue<byte[]>(8), _v2.AsSpan(0, n));
            ArraySendDecoder.Int32(reader.GetFieldValue<byte[]>(9), _flags.AsSpan(0, n));
            ArraySendDecoder.Int16(reader.GetFieldValue<byte[]>(10), _outcome.AsSpan(0, n));
            ArraySendDecoder.NullableFloat64(reader.GetFieldValue<byte[]>(11), _nis.AsSpan(0, n));
            ArraySendDecoder.Boolean(reader.GetFieldValue<byte[]>(12), _reset.AsSpan(0, n));
            ArraySendDecoder.NullableFloat32(reader.GetFieldValue<byte[]>(13), _w0.AsSpan(0, n));
            ArraySendDecoder.NullableFloat32(reader.GetFieldValue<byte[]>(14), _w1.AsSpan(0, n));
            return n;
        }

        public JudgedMeasurement At(Guid fleetId, string vehicleId, int i) => new(
            new MeasurementRow(
                fleetId, vehicleId, _kind[i], Time[i], _key[i], UnixMicroseconds.ToDateTimeUtc(_received[i]), _v0[i], _v1[i], _v2[i],
                _flags[i], OutcomeCodes.FromCode(_outcome[i]), _nis[i], _reset[i]),
            _w0[i],
            _w1[i]);
    }
}
