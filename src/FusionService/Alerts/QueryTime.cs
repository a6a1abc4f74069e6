// from/to query parameters: RFC 3339 or Unix milliseconds.
using System.Globalization;

namespace FusionService.Alerts;

/// <summary>Parses a time query parameter given as an RFC 3339 date-time with offset or as Unix milliseconds.</summary>
internal static class QueryTime
{
    public static bool TryParse(string text, out DateTimeOffset value)
    {
        value = default;
        if (long.TryParse(text, NumberStyles.Integer, CultureInfo.InvariantCulture, out long ms))
        {
            if (ms < 0 || ms > 253_402_300_799_000)
            {
                return false;
            }

            value = DateTimeOffset.FromUnixTimeMilliseconds(ms);
            return true;
        }

        if (text.Length >= 20 && text[10] is 'T' or 't'
            && DateTimeOffset.TryParse(text, CultureInfo.InvariantCulture, DateTimeStyles.None, out var parsed)
            && (text.EndsWith('Z') || text.EndsWith('z') || text[^6] is '+' or '-'))
        {
            value = parsed.ToUniversalTime();
            return true;
        }

        return false;
    }
}
