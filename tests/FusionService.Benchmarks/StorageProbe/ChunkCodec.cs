// The little-endian binary layout of the storage probe's per-vehicle chunks (docs/storage-cost.md describes it).
using System.Buffers;
using System.Buffers.Binary;
using FusionService.Estimation.Measurements;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;

namespace FusionService.Benchmarks.StorageProbe;

/// <summary>
/// Packs one vehicle's measurements, their verdicts and fused states into byte arrays (layout version 1, all numbers
/// little-endian, varint = unsigned LEB128, zigzag for signed).
/// <list type="bullet">
/// <item>Measurements: version byte, varint count, int64 base time (µs); per measurement in canonical order: varint
/// time step from the previous one (the first from the base), kind byte, presence byte (bit 0 v1, bit 1 v2), varint
/// message key, zigzag varint receive delay (received − measured, µs), float64 v0, float64 v1 when present, float32
/// v2 when its bits are not zero.</item>
/// <item>Verdicts, in the same order: version byte, varint count; per measurement a byte (outcome code in bits 0-3,
/// track reset bit 4, NIS present bit 5, w0 bit 6, w1 bit 7), float64 NIS, float32 w0, float32 w1 when present.</item>
/// <item>Fused states: version byte, varint count, int64 base time; per state varint time step and 47 float64 (lat,
/// lon, heading, speed, yaw rate, acceleration, gyro bias, wheel scale, 36 covariance values, ellipse major, minor,
/// orientation).</item>
/// </list>
/// </summary>
internal static class ChunkCodec
{
    private const byte Version = 1;

    public static byte[] EncodeMeasurements(Measurement[] day, IReadOnlyList<int> indices, IReadOnlyList<long> receivedUs)
    {
        var w = new ArrayBufferWriter<byte>(indices.Count * 32);
        PutByte(w, Version);
        PutVarint(w, (ulong)indices.Count);
        long baseUs = day[indices[0]].TimeUs;
        PutInt64(w, baseUs);
        long previous = baseUs;
        for (int n = 0; n < indices.Count; n++)
        {
            Measurement m = day[indices[n]];
            PutVarint(w, (ulong)(m.TimeUs - previous));
            previous = m.TimeUs;
            bool hasV1 = !double.IsNaN(m.Value1);
            bool hasV2 = BitConverter.SingleToInt32Bits(m.Value2) != 0;
            PutByte(w, (byte)m.Kind);
            PutByte(w, (byte)((hasV1 ? 1 : 0) | (hasV2 ? 2 : 0)));
            PutVarint(w, m.MessageKey);
            PutVarint(w, ZigZag(receivedUs[n] - m.TimeUs));
            PutDouble(w, m.Value0);
            if (hasV1)
            {
                PutDouble(w, m.Value1);
            }

            if (hasV2)
            {
                Span<byte> s = w.GetSpan(4);
                BinaryPrimitives.WriteSingleLittleEndian(s, m.Value2);
                w.Advance(4);
            }
        }

        return w.WrittenSpan.ToArray();
    }

    /// <summary>Appends the chunk's measurements to <paramref name="into"/>; <paramref name="onKey"/> sees each one's time and order key.</summary>
    public static void DecodeMeasurements(ReadOnlySpan<byte> chunk, List<Measurement>? into, Action<long, ulong>? onKey = null)
    {
        int p = 0;
        if (chunk[p++] != Version)
        {
            throw new InvalidDataException("unknown chunk layout version");
        }

        int count = (int)GetVarint(chunk, ref p);
        long time = BinaryPrimitives.ReadInt64LittleEndian(chunk[p..]);
        p += 8;
        for (int n = 0; n < count; n++)
        {
            time += (long)GetVarint(chunk, ref p);
            var kind = (SensorKind)chunk[p++];
            byte presence = chunk[p++];
            ulong key = GetVarint(chunk, ref p);
            _ = GetVarint(chunk, ref p);
            double v0 = BinaryPrimitives.ReadDoubleLittleEndian(chunk[p..]);
            p += 8;
            double v1 = double.NaN;
            if ((presence & 1) != 0)
            {
                v1 = BinaryPrimitives.ReadDoubleLittleEndian(chunk[p..]);
                p += 8;
            }

            float v2 = 0f;
            if ((presence & 2) != 0)
            {
                v2 = BinaryPrimitives.ReadSingleLittleEndian(chunk[p..]);
                p += 4;
            }

            ulong orderKey = Measurement.OrderKeyOf(kind, key);
            onKey?.Invoke(time, orderKey);
            into?.Add(Measurement.FromStored(time, orderKey, v0, v1, v2));
        }
    }

    public static byte[] EncodeVerdicts(MeasurementOutcomeUpdate[] verdicts, IReadOnlyList<int> indices)
    {
        var w = new ArrayBufferWriter<byte>(indices.Count * 12);
        PutByte(w, Version);
        PutVarint(w, (ulong)indices.Count);
        foreach (int i in indices)
        {
            var v = verdicts[i];
            int head = OutcomeCodes.ToCode(v.Outcome) & 0x0F;
            head |= v.TrackReset ? 1 << 4 : 0;
            head |= v.Nis.HasValue ? 1 << 5 : 0;
            head |= v.Whitened0.HasValue ? 1 << 6 : 0;
            head |= v.Whitened1.HasValue ? 1 << 7 : 0;
            PutByte(w, (byte)head);
            if (v.Nis is double nis)
            {
                PutDouble(w, nis);
            }

            foreach (float? f in (ReadOnlySpan<float?>)[v.Whitened0, v.Whitened1])
            {
                if (f is float value)
                {
                    Span<byte> s = w.GetSpan(4);
                    BinaryPrimitives.WriteSingleLittleEndian(s, value);
                    w.Advance(4);
                }
            }
        }

        return w.WrittenSpan.ToArray();
    }

    public static byte[] EncodeFusedStates(FusedStateRow[] states, int from, int to)
    {
        var w = new ArrayBufferWriter<byte>((to - from) * 400);
        PutByte(w, Version);
        PutVarint(w, (ulong)(to - from));
        long previous = states[from].TimeUs;
        PutInt64(w, previous);
        for (int i = from; i < to; i++)
        {
            var s = states[i];
            PutVarint(w, (ulong)(s.TimeUs - previous));
            previous = s.TimeUs;
            foreach (double d in (ReadOnlySpan<double>)[s.LatDeg, s.LonDeg, s.HeadingRad, s.SpeedMps, s.YawRateRps, s.AccelMps2, s.GyroBiasRps, s.WheelScale])
            {
                PutDouble(w, d);
            }

            foreach (double d in s.Covariance.Span)
            {
                PutDouble(w, d);
            }

            PutDouble(w, s.EllipseMajorM);
            PutDouble(w, s.EllipseMinorM);
            PutDouble(w, s.EllipseOrientationRad);
        }

        return w.WrittenSpan.ToArray();
    }

    /// <summary>The 8 × 8 covariance's 36 packed values as little-endian float64 (the compact layout's bytea column).</summary>
    public static byte[] PackCovariance(ReadOnlySpan<double> packed)
    {
        var bytes = new byte[packed.Length * 8];
        for (int i = 0; i < packed.Length; i++)
        {
            BinaryPrimitives.WriteDoubleLittleEndian(bytes.AsSpan(i * 8), packed[i]);
        }

        return bytes;
    }

    private static ulong ZigZag(long v) => (ulong)((v << 1) ^ (v >> 63));

    private static void PutByte(ArrayBufferWriter<byte> w, byte b)
    {
        w.GetSpan(1)[0] = b;
        w.Advance(1);
    }

    private static void PutInt64(ArrayBufferWriter<byte> w, long v)
    {
        BinaryPrimitives.WriteInt64LittleEndian(w.GetSpan(8), v);
        w.Advance(8);
    }

    private static void PutDouble(ArrayBufferWriter<byte> w, double v)
    {
        BinaryPrimitives.WriteDoubleLittleEndian(w.GetSpan(8), v);
        w.Advance(8);
    }

    private static void PutVarint(ArrayBufferWriter<byte> w, ulong v)
    {
        Span<byte> s = w.GetSpan(10);
        int n = 0;
        while (v >= 0x80)
        {
            s[n++] = (byte)(v | 0x80);
            v >>= 7;
        }

        s[n++] = (byte)v;
        w.Advance(n);
    }

    private static ulong GetVarint(ReadOnlySpan<byte> s, ref int p)
    {
        ulong v = 0;
        int shift = 0;
        while (true)
        {
            byte b = s[p++];
            v |= (ulong)(b & 0x7F) << shift;
            if (b < 0x80)
            {
                return v;
            }

            shift += 7;
        }
    }
}
