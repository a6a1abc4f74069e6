// 56-bit message keys from client ids or message content.
using System.Buffers.Binary;
using System.Security.Cryptography;
using System.Text;
using FusionService.Estimation.Measurements;

namespace FusionService.Ingest;

/// <summary>
/// Message keys: the first 56 bits of SHA-256 (FIPS 180-4) of the client's message id, or, for a message without
/// an id, of its canonical content (kind, time and values), so an identical retry gets the same key and is a duplicate.
/// </summary>
public static class MessageKeys
{
    /// <summary>Key of a message with the client id <paramref name="id"/>.</summary>
    public static ulong FromId(string id) => Hash("id\n" + id);

    /// <summary>Key of a message without an id, from its content in a canonical text form.</summary>
    public static ulong FromContent(string kind, long timeUs, ReadOnlySpan<double> values)
    {
        var text = new StringBuilder("content\n").Append(kind).Append('\n').Append(timeUs.ToString(System.Globalization.CultureInfo.InvariantCulture));
        foreach (var v in values)
        {
            text.Append('\n').Append(double.IsNaN(v) ? "-" : v.ToString("R", System.Globalization.CultureInfo.InvariantCulture));
        }

        return Hash(text.ToString());
    }

    private static ulong Hash(string text)
    {
        Span<byte> digest = stackalloc byte[32];
        SHA256.HashData(Encoding.UTF8.GetBytes(text), digest);
        return BinaryPrimitives.ReadUInt64BigEndian(digest) >> 8 & Measurement.MaxMessageKey;
    }
}
