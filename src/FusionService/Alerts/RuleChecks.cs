// Range checks shared by the rule settings.
using System.Globalization;

namespace FusionService.Alerts;

/// <summary>Validation helpers for the rule settings: each returns "field: reason" or null.</summary>
internal static class RuleChecks
{
    public static string? Range(string field, double value, double min, double max) =>
        double.IsFinite(value) && value >= min && value <= max
            ? null
            : string.Create(CultureInfo.InvariantCulture, $"{field}: must be a number from {min} to {max}; got {value}");
}
