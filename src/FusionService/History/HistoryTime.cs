// Parsing and formatting of the history endpoints' times.
using System.Globalization;
using System.Text.RegularExpressions;

namespace FusionService.History;

/// <summary>Times of the history endpoints: RFC 3339 with an offset, or Unix milliseconds; written as RFC 3339 UTC.</summary>
internal static partial class HistoryTime
{
    /// <summary>Parses an RFC 3339 date-time with an offset (e.g. 2026-05-01T08:30:00.250Z) or an integer of Unix milliseconds.</summary>
    public static bool TryParse(string? text, out long timeUs)
    {
        timeUs = 0;
        if (string.IsNullOrWhiteSpace(text))
        {
            return false;
        }

        if (UnixMilliseconds().IsMatch(text))
        {
            if (!long.TryParse(text, NumberStyles.AllowLeadingSign, CultureInfo.InvariantCulture, out long ms) || Math.Abs(ms) > 253_402_300_799_999L)
            {
                return false;
            }

            timeUs = ms * 1000;
            return true;
        }

        if (!Rfc3339().IsMatch(text)
            || !DateTimeOffset.TryParse(text, CultureInfo.InvariantCulture, DateTimeStyles.None, out var instant))
        {
            return false;
        }

        timeUs = (instant.UtcTicks - DateTime.UnixEpoch.Ticks) / 10;
        return true;
    }

    /// <summary>RFC 3339 UTC with microseconds, e.g. 2026-05-01T08:30:00.250000Z.</summary>
    public static string Format(long timeUs) =>
        DateTime.UnixEpoch.AddTicks(timeUs * 10).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", CultureInfo.InvariantCulture);

    [GeneratedRegex("^-?[0-9]{1,16}$", RegexOptions.CultureInvariant)]
    private static partial Regex UnixMilliseconds();

    [GeneratedRegex("^[0-9]{4}-[0-9]{2}-[0-9]{2}[Tt ][0-9]{2}:[0-9]{2}:[0-9]{2}(\\.[0-9]+)?([Zz]|[+-][0-9]{2}:[0-9]{2})$", RegexOptions.CultureInvariant)]
    private static partial Regex Rfc3339();
}
