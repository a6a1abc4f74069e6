// The NMEA 0183 sentence checksum.
namespace FusionService.Ingest.Nmea;

/// <summary>
/// The NMEA 0183 checksum: the exclusive OR of every character between '$' and '*' (both excluded), written after
/// the '*' as two hexadecimal digits (NMEA 0183 standard, sentence structure).
/// </summary>
public static class NmeaChecksum
{
    /// <summary>XOR of the characters of <paramref name="payload"/> (the text between '$' and '*').</summary>
    /// <exception cref="ArgumentException">A character outside 7-bit ASCII.</exception>
    public static byte Compute(ReadOnlySpan<char> payload)
    {
        byte sum = 0;
        foreach (char c in payload)
        {
            if (c > 0x7F)
            {
                throw new ArgumentException("NMEA sentences are 7-bit ASCII", nameof(payload));
            }

            sum ^= (byte)c;
        }

        return sum;
    }
}
