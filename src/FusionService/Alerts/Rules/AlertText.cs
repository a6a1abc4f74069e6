// Formatting shared by the alert rules' summaries and details.
using System.Globalization;
using System.Text.Json.Nodes;
using FusionService.Estimation.Time;

namespace FusionService.Alerts.Rules;

/// <summary>Culture-invariant text, times and numbers for alert summaries and details.</summary>
internal static class AlertText
{
    /// <summary><paramref name="text"/> formatted with the invariant culture.</summary>
    public static string Inv(FormattableString text) => text.ToString(CultureInfo.InvariantCulture);

    /// <summary>A data time (µs since the Unix epoch) as a UTC time.</summary>
    public static DateTimeOffset ToTime(long timeUs) => UnixMicroseconds.ToDateTimeOffset(timeUs);

    /// <summary>A data time (µs since the Unix epoch) as RFC 3339 UTC text with microseconds.</summary>
    public static string Time(long timeUs) => ToTime(timeUs).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", CultureInfo.InvariantCulture);

    /// <summary>A finite number as JSON, null otherwise.</summary>
    public static JsonNode? Num(double value) => double.IsFinite(value) ? JsonValue.Create(value) : null;

    /// <summary>Radians in degrees.</summary>
    public static double Degrees(double rad) => rad * 180.0 / Math.PI;
}
