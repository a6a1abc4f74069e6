// Time query parameters: RFC 3339 or Unix milliseconds.
using System.Globalization;
using System.Text.RegularExpressions;

namespace FusionService.Http;

/// <summary>Parses the <c>from</c>, <c>to</c> and <c>time</c> query parameters of every endpoint, written like ingest times.</summary>
public static partial class QueryTime
{
    /// <summary>
    /// Parses an RFC 3339 date-time with an offset (e.g. <c>2026-05-01T08:30:00.250Z</c>; a '+' offset must be sent
    /// URL-encoded as %2B) or a number of Unix milliseconds.
    /// </summary>
    /// <param name="text">The parameter's value.</param>
    /// <param name="timeUs">Receives the instant, Unix microseconds.</param>
    /// <returns>False when the text is neither form.</returns>
    public static bool TryParse(string? text, out long timeUs)
    {
        timeUs = 0;
        if (string.IsNullOrWhiteSpace(text))
        {
            return false;
        }

        if (double.TryParse(text, NumberStyles.Float, CultureInfo.InvariantCulture, out double ms))
        {
            if (!double.IsFinite(ms) || ms < 0 || ms > 253_402_300_799_000)
            {
                return false;
            }

            timeUs = (long)Math.Round(ms * 1000.0, MidpointRounding.ToEven);
            return true;
        }

        if (!Rfc3339Pattern().IsMatch(text)
            || !DateTimeOffset.TryParse(text, CultureInfo.InvariantCulture, DateTimeStyles.None, out var instant))
        {
            return false;
        }

        timeUs = (instant.UtcTicks - DateTime.UnixEpoch.Ticks) / 10;
        return true;
    }

    /// <summary>The instant of <paramref name="timeUs"/> (Unix microseconds) for a response.</summary>
    public static DateTimeOffset ToTime(long timeUs) => DateTimeOffset.UnixEpoch.AddTicks(timeUs * 10);

    [GeneratedRegex(@"^\d{4}-\d{2}-\d{2}[Tt]\d{2}:\d{2}:\d{2}(\.\d{1,7})?([Zz]|[+-]\d{2}:\d{2})$", RegexOptions.CultureInvariant)]
    private static partial Regex Rfc3339Pattern();
}
