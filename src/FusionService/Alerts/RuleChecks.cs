// Range checks shared by the rule settings.
using System.Globalization;
using FusionService.Estimation.Measurements;

namespace FusionService.Alerts;

/// <summary>Validation helpers for the rule settings: each returns "field: reason" or null.</summary>
internal static class RuleChecks
{
    public static string? Range(string field, double value, double min, double max) =>
        double.IsFinite(value) && value >= min && value <= max
            ? null
            : string.Create(CultureInfo.InvariantCulture, $"{field}: must be a number from {min} to {max}; got {value}");

    public static string? Sensors(string field, IReadOnlyList<string>? sensors) =>
        sensors is { Count: > 0 } && sensors.All(SensorNames.IsName) && sensors.Distinct(StringComparer.Ordinal).Count() == sensors.Count
            ? null
            : field + ": must be a non-empty list of distinct sensor names from " + string.Join(", ", SensorNames.AllNames);

    public static bool Includes(IReadOnlyList<string> sensors, SensorKind sensor)
    {
        string name = AlertKinds.SensorName(sensor);
        for (int i = 0; i < sensors.Count; i++)
        {
            if (string.Equals(sensors[i], name, StringComparison.Ordinal))
            {
                return true;
            }
        }

        return false;
    }
}
