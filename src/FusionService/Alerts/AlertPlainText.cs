// What an alert means for the person watching the fleet, in plain words.
using System.Globalization;
using System.Text.Json;

namespace FusionService.Alerts;

/// <summary>
/// The plain-language summary of an alert, written from its kind and the numbers in its details: what happened to the
/// van and what it means for the shown position, without filter terms and without the occurrence count (which the
/// alert carries in <c>count</c>). The rule's own sentence with the numbers stays in <c>technical_summary</c>.
/// </summary>
public static class AlertPlainText
{
    /// <summary>The summary for an alert of <paramref name="kind"/> with <paramref name="details"/>.</summary>
    public static string Summarise(string kind, JsonElement details)
    {
        ArgumentNullException.ThrowIfNull(kind);
        return kind switch
        {
            AlertKinds.GatedBurst =>
                "Several position reports did not fit the van's path and were ignored; the shown position leans on the other sensors until they fit again.",
            AlertKinds.InconsistentSensor =>
                Sensors(details) + " less accurate than " + (Plural(details) ? "they report" : "it reports") + ", so the shown position may be less certain than its error ellipse says.",
            AlertKinds.GnssSilentWhileMoving => Number(details, "silent_s") is { } silentS
                ? Inv($"No satellite position for {Duration(silentS)} while driving; the position is carried on from wheel and gyro readings and grows less certain.")
                : "No satellite position while driving; the position is carried on from wheel and gyro readings and grows less certain.",
            AlertKinds.TrackReset => Number(details, "position_shift_m") is { } shiftM && shiftM > 0
                ? Inv($"The position was restarted {shiftM:0} m away after the reports kept disagreeing with the track: a jump in the satellite position or the van was moved.")
                : "The position was restarted at a new place after the reports kept disagreeing with the track: a jump in the satellite position or the van was moved.",
            AlertKinds.WheelScaleOutOfBand => Number(details, "wheel_scale") is { } scale
                ? Inv($"The wheels report {Math.Abs(scale - 1) * 100:0.0} % {(scale > 1 ? "more" : "less")} speed than the van drives: check the tyre size and pressure.")
                : "The wheel-speed reading is off: check the tyre size and pressure.",
            AlertKinds.MovedWithoutDriving =>
                "The van is moving while its wheels stand still: towed, on a ferry or lifted?",
            AlertKinds.SensorIsolated =>
                Isolated(details) + " disagrees with the other sensors and is ignored until it agrees again: check how it is fitted and set up.",
            AlertKinds.VehicleSilent => Number(details, "silent_s") is { } quietS
                ? Inv($"Nothing received from the van for {Duration(quietS)}: its tracker may be off, out of coverage or broken.")
                : "Nothing received from the van for a while: its tracker may be off, out of coverage or broken.",
            AlertKinds.MeasurementUnusable => details.ValueKind == JsonValueKind.Object && details.TryGetProperty("last_sensor", out var sensor)
                && sensor.ValueKind == JsonValueKind.String
                ? "A reading from " + SensorName(sensor.GetString()!) + " could not be used and was skipped; the position goes on from the other readings."
                : "A reading could not be used and was skipped; the position goes on from the other readings.",
            _ => "Something about this van needs a look; see the technical summary.",
        };
    }

    private static string Sensors(JsonElement details)
    {
        var names = new List<string>();
        if (details.ValueKind == JsonValueKind.Object && details.TryGetProperty("sensors", out var sensors) && sensors.ValueKind == JsonValueKind.Array)
        {
            foreach (var entry in sensors.EnumerateArray())
            {
                if (entry.ValueKind == JsonValueKind.Object && entry.TryGetProperty("sensor", out var name) && name.ValueKind == JsonValueKind.String)
                {
                    names.Add(SensorName(name.GetString()!));
                }
            }
        }

        return names.Count switch
        {
            0 => "A sensor's readings are",
            1 => Capital(names[0]) + "'s readings are",
            _ => Capital(string.Join(" and ", names.Distinct(StringComparer.Ordinal))) + " give readings",
        };
    }

    private static bool Plural(JsonElement details) =>
        details.ValueKind == JsonValueKind.Object && details.TryGetProperty("sensors", out var sensors) && sensors.ValueKind == JsonValueKind.Array && sensors.GetArrayLength() > 1;

    private static string Isolated(JsonElement details)
    {
        bool gyro = details.ValueKind == JsonValueKind.Object && details.TryGetProperty("imu_isolated_since", out _);
        bool course = details.ValueKind == JsonValueKind.Object && details.TryGetProperty("gnss_course_isolated_since", out _);
        return (gyro, course) switch
        {
            (true, true) => "The gyro and the satellite course",
            (true, false) => "The gyro",
            (false, true) => "The satellite course",
            _ => "A sensor",
        };
    }

    private static string SensorName(string stored) => stored switch
    {
        "gnss_position" => "the satellite position",
        "gnss_velocity" => "the satellite speed",
        "wheel" => "the wheel-speed sensor",
        "imu" => "the gyro",
        _ => "the " + stored.Replace('_', ' '),
    };

    private static string Capital(string text) => text.Length == 0 ? text : char.ToUpperInvariant(text[0]) + text[1..];

    private static double? Number(JsonElement details, string name) =>
        details.ValueKind == JsonValueKind.Object && details.TryGetProperty(name, out var value) && value.ValueKind == JsonValueKind.Number && value.TryGetDouble(out double d) && double.IsFinite(d)
            ? d
            : null;

    private static string Duration(double seconds) => seconds < 120
        ? Inv($"{seconds:0} s")
        : seconds < 7200 ? Inv($"{seconds / 60:0} min") : Inv($"{seconds / 3600:0.#} h");

    private static string Inv(FormattableString text) => text.ToString(CultureInfo.InvariantCulture);
}
