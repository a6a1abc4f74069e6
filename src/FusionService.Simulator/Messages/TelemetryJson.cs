// JSON and NDJSON form of telemetry messages (System.Text.Json, invariant culture).
using System.Buffers;
using System.Globalization;
using System.Text;
using System.Text.Json;
using FusionService.Estimation.Time;

namespace FusionService.Simulator.Messages;

/// <summary>
/// Writes and reads <see cref="TelemetryMessage"/>s in the ingest API's JSON form with System.Text.Json: snake_case
/// member names (<c>vehicle</c>, <c>kind</c>, <c>time</c>, <c>id</c>, <c>lat_deg</c>, <c>lon_deg</c>, <c>accuracy_m</c>,
/// <c>accuracy_kind</c>, <c>speed_mps</c>, <c>course_deg</c>, <c>speed_accuracy_mps</c>, <c>yaw_rate_dps</c>,
/// <c>accel_mps2</c>), absent members not written, numbers in the shortest form that reads back to the same double
/// (no trailing zeros, never through the current culture), time as RFC 3339 UTC with six fraction digits
/// ("2026-12-02T08:00:00.100000Z"). NDJSON: one object per line, each line ended by "\n" (no blank lines).
/// </summary>
public static class TelemetryJson
{
    /// <summary>Content type of an NDJSON request body.</summary>
    public const string NdjsonContentType = "application/x-ndjson";

    private const string TimeFormat = "yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'";

    /// <summary>RFC 3339 UTC form of a Unix time with microseconds, e.g. "2026-12-02T08:00:00.100000Z".</summary>
    /// <param name="timeUs">Microseconds since the Unix epoch; within the years 0001-9999.</param>
    public static string FormatTime(long timeUs) =>
        UnixMicroseconds.ToDateTimeUtc(timeUs).ToString(TimeFormat, CultureInfo.InvariantCulture);

    /// <summary>
    /// Parses an RFC 3339 time (any offset; converted to UTC) to Unix microseconds.
    /// </summary>
    /// <param name="text">The time, e.g. "2026-12-02T08:00:00.100000Z".</param>
    /// <exception cref="FormatException">Not a time, or finer than a microsecond.</exception>
    public static long ParseTime(string text)
    {
        ArgumentNullException.ThrowIfNull(text);
        DateTimeOffset t = DateTimeOffset.Parse(text, CultureInfo.InvariantCulture, DateTimeStyles.AssumeUniversal | DateTimeStyles.AdjustToUniversal);
        long timeUs = UnixMicroseconds.FromDateTimeOffset(t);
        if (UnixMicroseconds.ToDateTimeOffset(timeUs) != t)
        {
            throw new FormatException($"time '{text}' is finer than a microsecond");
        }

        return timeUs;
    }

    /// <summary>Writes one message as a JSON object.</summary>
    /// <param name="writer">Destination.</param>
    /// <param name="message">The message; its numbers must be finite.</param>
    /// <exception cref="ArgumentException">A number is NaN or infinite.</exception>
    public static void Write(Utf8JsonWriter writer, TelemetryMessage message)
    {
        ArgumentNullException.ThrowIfNull(writer);
        ArgumentNullException.ThrowIfNull(message);
        writer.WriteStartObject();
        writer.WriteString("vehicle", message.Vehicle);
        writer.WriteString("kind", message.Kind);
        writer.WriteString("time", FormatTime(message.TimeUs));
        writer.WriteString("id", message.Id);
        Number(writer, "lat_deg", message.LatDeg);
        Number(writer, "lon_deg", message.LonDeg);
        Number(writer, "accuracy_m", message.AccuracyM);
        if (message.AccuracyKind is not null)
        {
            writer.WriteString("accuracy_kind", message.AccuracyKind);
        }

        Number(writer, "speed_mps", message.SpeedMps);
        Number(writer, "course_deg", message.CourseDeg);
        Number(writer, "speed_accuracy_mps", message.SpeedAccuracyMps);
        Number(writer, "yaw_rate_dps", message.YawRateDps);
        Number(writer, "accel_mps2", message.AccelMps2);
        writer.WriteEndObject();
    }

    /// <summary>One message as UTF-8 JSON (no trailing newline).</summary>
    /// <param name="message">The message.</param>
    public static byte[] SerializeToUtf8Bytes(TelemetryMessage message)
    {
        var buffer = new System.Buffers.ArrayBufferWriter<byte>(256);
        using (var writer = new Utf8JsonWriter(buffer))
        {
            Write(writer, message);
        }

        return buffer.WrittenSpan.ToArray();
    }

    /// <summary>One message as a JSON string (no trailing newline).</summary>
    /// <param name="message">The message.</param>
    public static string Serialize(TelemetryMessage message) => Encoding.UTF8.GetString(SerializeToUtf8Bytes(message));

    /// <summary>Reads one message from a JSON object; unknown members are ignored.</summary>
    /// <param name="element">A JSON object.</param>
    /// <exception cref="FormatException">A required member (vehicle, kind, time, id) is missing or a member has the wrong type.</exception>
    public static TelemetryMessage Read(JsonElement element)
    {
        if (element.ValueKind != JsonValueKind.Object)
        {
            throw new FormatException("a telemetry message must be a JSON object");
        }

        string vehicle = RequiredString(element, "vehicle");
        string kind = RequiredString(element, "kind");
        long timeUs = ParseTime(RequiredString(element, "time"));
        string id = RequiredString(element, "id");
        return new TelemetryMessage(vehicle, kind, timeUs, id)
        {
            LatDeg = OptionalNumber(element, "lat_deg"),
            LonDeg = OptionalNumber(element, "lon_deg"),
            AccuracyM = OptionalNumber(element, "accuracy_m"),
            AccuracyKind = element.TryGetProperty("accuracy_kind", out JsonElement k) && k.ValueKind == JsonValueKind.String ? k.GetString() : null,
            SpeedMps = OptionalNumber(element, "speed_mps"),
            CourseDeg = OptionalNumber(element, "course_deg"),
            SpeedAccuracyMps = OptionalNumber(element, "speed_accuracy_mps"),
            YawRateDps = OptionalNumber(element, "yaw_rate_dps"),
            AccelMps2 = OptionalNumber(element, "accel_mps2"),
        };
    }

    /// <summary>Reads one message from JSON text.</summary>
    /// <param name="json">One JSON object.</param>
    public static TelemetryMessage Deserialize(string json)
    {
        ArgumentNullException.ThrowIfNull(json);
        using JsonDocument doc = JsonDocument.Parse(json);
        return Read(doc.RootElement);
    }

    /// <summary>The messages as NDJSON bytes (UTF-8): one object per line, each ended by "\n".</summary>
    /// <param name="messages">Messages in the order to write.</param>
    public static byte[] ToNdjson(IEnumerable<TelemetryMessage> messages)
    {
        ArgumentNullException.ThrowIfNull(messages);
        var buffer = new System.Buffers.ArrayBufferWriter<byte>(4096);
        WriteNdjson(buffer, messages);
        return buffer.WrittenSpan.ToArray();
    }

    /// <summary>Appends the messages as NDJSON lines to <paramref name="buffer"/>.</summary>
    /// <param name="buffer">Destination.</param>
    /// <param name="messages">Messages in the order to write.</param>
    public static void WriteNdjson(System.Buffers.IBufferWriter<byte> buffer, IEnumerable<TelemetryMessage> messages)
    {
        ArgumentNullException.ThrowIfNull(buffer);
        ArgumentNullException.ThrowIfNull(messages);
        using var writer = new Utf8JsonWriter(buffer);
        foreach (TelemetryMessage m in messages)
        {
            Write(writer, m);
            writer.Flush();
            writer.Reset();
            buffer.Write("\n"u8);
        }
    }

    /// <summary>Reads NDJSON text: one message per non-empty line.</summary>
    /// <param name="ndjson">The text.</param>
    /// <exception cref="FormatException">A line is not a message.</exception>
    public static IReadOnlyList<TelemetryMessage> ReadNdjson(string ndjson)
    {
        ArgumentNullException.ThrowIfNull(ndjson);
        var result = new List<TelemetryMessage>();
        foreach (string line in ndjson.Split('\n'))
        {
            if (line.Length > 0)
            {
                result.Add(Deserialize(line));
            }
        }

        return result;
    }

    private static void Number(Utf8JsonWriter writer, string name, double? value)
    {
        if (value is double v)
        {
            if (!double.IsFinite(v))
            {
                throw new ArgumentException($"member {name} must be finite, was {v}");
            }

            writer.WriteNumber(name, v);
        }
    }

    private static string RequiredString(JsonElement element, string name)
    {
        if (!element.TryGetProperty(name, out JsonElement value) || value.ValueKind != JsonValueKind.String)
        {
            throw new FormatException($"member '{name}' is missing or not a string");
        }

        return value.GetString()!;
    }

    private static double? OptionalNumber(JsonElement element, string name)
    {
        if (!element.TryGetProperty(name, out JsonElement value) || value.ValueKind == JsonValueKind.Null)
        {
            return null;
        }

        if (value.ValueKind != JsonValueKind.Number)
        {
            throw new FormatException($"member '{name}' must be a number");
        }

        return value.GetDouble();
    }
}
