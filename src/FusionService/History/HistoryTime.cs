// Parsing and formatting of the history endpoints' times.
using System.Globalization;
using FusionService.Estimation.Time;
using FusionService.Http;

namespace FusionService.History;

/// <summary>Times of the history endpoints: RFC 3339 with an offset, or Unix milliseconds; written as RFC 3339 UTC.</summary>
internal static class HistoryTime
{
    /// <summary>Parses an RFC 3339 date-time with an offset or Unix milliseconds (<see cref="QueryTime.TryParse"/>).</summary>
    public static bool TryParse(string? text, out long timeUs) => QueryTime.TryParse(text, out timeUs);

    /// <summary>RFC 3339 UTC with microseconds, e.g. 2026-05-01T08:30:00.250000Z.</summary>
    public static string Format(long timeUs) =>
        UnixMicroseconds.ToDateTimeUtc(timeUs).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", CultureInfo.InvariantCulture);
}
