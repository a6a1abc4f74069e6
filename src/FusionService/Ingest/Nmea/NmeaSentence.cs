// One NMEA 0183 sentence split into its address and data fields.
using System.Globalization;

namespace FusionService.Ingest.Nmea;

/// <summary>
/// A checksum-verified NMEA 0183 sentence: <c>$</c>, a five-character address (two-character talker id and
/// three-character sentence formatter), comma-separated data fields, <c>*</c> and two hexadecimal checksum digits.
/// </summary>
/// <param name="Talker">Talker id, e.g. GP (GPS), GN (combined GNSS), GL (GLONASS), GA (Galileo).</param>
/// <param name="Formatter">Sentence formatter, e.g. RMC or GGA.</param>
/// <param name="Fields">Data fields after the address, possibly empty strings.</param>
public sealed record NmeaSentence(string Talker, string Formatter, IReadOnlyList<string> Fields)
{
    /// <summary>Longest line accepted, characters (the standard's limit is 82 including CR LF; receivers exceed it, so this is lenient).</summary>
    public const int MaxLineLength = 200;

    /// <summary>Parses one line (a trailing CR is ignored) and verifies its checksum.</summary>
    /// <param name="line">The line.</param>
    /// <param name="sentence">The sentence, or null.</param>
    /// <param name="field">When it fails: the part at fault (<c>checksum</c>, <c>address</c> or empty for the whole line).</param>
    /// <param name="reason">When it fails: why.</param>
    public static bool TryParse(string line, out NmeaSentence? sentence, out string field, out string reason)
    {
        ArgumentNullException.ThrowIfNull(line);
        sentence = null;
        field = string.Empty;
        reason = string.Empty;
        string text = line.TrimEnd('\r', ' ', '\t');
        if (text.Length > MaxLineLength)
        {
            reason = string.Create(CultureInfo.InvariantCulture, $"line is {text.Length} characters long; at most {MaxLineLength} accepted");
            return false;
        }

        if (text.Length == 0 || text[0] != '$')
        {
            reason = "a sentence must start with '$'";
            return false;
        }

        int star = text.LastIndexOf('*');
        if (star < 0)
        {
            field = "checksum";
            reason = "missing: a sentence must end with '*' and two hexadecimal digits";
            return false;
        }

        string digits = text[(star + 1)..];
        if (digits.Length != 2 || !byte.TryParse(digits, NumberStyles.AllowHexSpecifier, CultureInfo.InvariantCulture, out byte stated))
        {
            field = "checksum";
            reason = "'" + digits + "' is not two hexadecimal digits";
            return false;
        }

        var payload = text.AsSpan(1, star - 1);
        foreach (char c in payload)
        {
            if (c > 0x7E || c < 0x20)
            {
                reason = "contains a character outside printable 7-bit ASCII";
                return false;
            }
        }

        byte computed = NmeaChecksum.Compute(payload);
        if (computed != stated)
        {
            field = "checksum";
            reason = string.Create(CultureInfo.InvariantCulture, $"stated {stated:X2} but the sentence's characters give {computed:X2}");
            return false;
        }

        string[] parts = payload.ToString().Split(',');
        string address = parts[0];
        if (address.Length != 5 || !address.All(char.IsAsciiLetterUpper))
        {
            field = "address";
            reason = "'" + address + "' is not a talker id and sentence formatter of five capital letters";
            return false;
        }

        sentence = new NmeaSentence(address[..2], address[2..], parts[1..]);
        return true;
    }
}
