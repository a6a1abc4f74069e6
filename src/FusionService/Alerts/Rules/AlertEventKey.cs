// Identity of one measurement as the alert rules count it.
using FusionService.Estimation.Measurements;

namespace FusionService.Alerts.Rules;

/// <summary>A measurement's time, sensor and message key: a measurement re-processed after a late arrival is counted once.</summary>
internal readonly record struct AlertEventKey(long TimeUs, SensorKind Sensor, ulong MessageKey)
{
    /// <summary>The key of <paramref name="m"/>.</summary>
    public static AlertEventKey Of(in Measurement m) => new(m.TimeUs, m.Kind, m.MessageKey);
}
