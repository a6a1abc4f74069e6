// Time query parameters: RFC 3339 or Unix milliseconds.
using System.Globalization;
using System.Text.RegularExpressions;
using FusionService.Estimation.Time;

namespace FusionService.Http;

/// <summary>Parses the <c>from</c>, <c>to</c> and <c>time</c> query parameters of every endpoint, written like ingest times.</summary>
public static partial class QueryTime
{
    /// <summary>Earliest accepted instant: 1970-01-01T00:00:00Z (Unix microseconds 0).</summary>
    public const long MinTimeUs = 0;

    /// <summary>
    /// Latest accepted instant, 9000-01-01T00:00:00Z, Unix microseconds. Far beyond any stored data, and far enough
    /// below the end of the representable range (9999-12-31) that an endpoint's window, replay lead or margin added
    /// to it stays representable.
    /// </summary>
    public const long MaxTimeUs = 221_845_392_000_000_000;

    /// <summary>How the parameters are written, for error messages.</summary>
    public const string Formats = "an RFC 3339 date-time with an offset (a '+' offset URL-encoded as %2B) or Unix milliseconds, "
        + "from 1970-01-01T00:00:00Z to 9000-01-01T00:00:00Z";

    /// <summary>
    /// Parses an RFC 3339 date-time with an offset (e.g. <c>2026-05-01T08:30:00.250Z</c>; a '+' offset must be sent
    /// URL-encoded as %2B) or a number of Unix milliseconds, within [<see cref="MinTimeUs"/>, <see cref="MaxTimeUs"/>].
    /// </summary>
    /// <param name="text">The parameter's value.</param>
    /// <param name="timeUs">Receives the instant, Unix microseconds.</param>
    /// <returns>False when the text is neither form or lies outside the accepted range.</returns>
    public static bool TryParse(string? text, out long timeUs) => Check(text, out timeUs) is null;

    /// <summary>Parses like <see cref="TryParse"/> and says what is wrong.</summary>
    /// <param name="text">The parameter's value (null when it is missing).</param>
    /// <param name="timeUs">Receives the instant, Unix microseconds.</param>
    /// <returns>Null when valid; otherwise the problem, to follow "name: ".</returns>
    public static string? Check(string? text, out long timeUs)
    {
        timeUs = 0;
        if (text is null)
        {
            return "is required, as " + Formats;
        }

        if (string.IsNullOrWhiteSpace(text))
        {
            return "is empty; expected " + Formats;
        }

        string shown = text.Length > 64 ? text[..64] + "..." : text;
        if (double.TryParse(text, NumberStyles.Float, CultureInfo.InvariantCulture, out double ms))
        {
            if (!double.IsFinite(ms) || ms < MinTimeUs / 1000.0 || ms > MaxTimeUs / 1000.0)
            {
                return "'" + shown + "' is outside the accepted range; expected " + Formats;
            }

            timeUs = (long)Math.Round(ms * 1000.0, MidpointRounding.ToEven);
            return null;
        }

        if (!Rfc3339Pattern().IsMatch(text)
            || !DateTimeOffset.TryParse(text, CultureInfo.InvariantCulture, DateTimeStyles.None, out var instant))
        {
            return "'" + shown + "' is not " + Formats;
        }

        long us = UnixMicroseconds.FromDateTimeOffset(instant);
        if (us is < MinTimeUs or > MaxTimeUs)
        {
            return "'" + shown + "' is outside the accepted range; expected " + Formats;
        }

        timeUs = us;
        return null;
    }

    /// <summary>The instant of <paramref name="timeUs"/> (Unix microseconds) for a response.</summary>
    public static DateTimeOffset ToTime(long timeUs) => UnixMicroseconds.ToDateTimeOffset(timeUs);

    [GeneratedRegex(@"^\d{4}-\d{2}-\d{2}[Tt]\d{2}:\d{2}:\d{2}(\.\d{1,7})?([Zz]|[+-]\d{2}:\d{2})\z", RegexOptions.CultureInvariant)]
    private static partial Regex Rfc3339Pattern();
}
