// Thresholds of the sensor_isolated rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>sensor_isolated</c>: the track has stopped using a sensor stream because it keeps disagreeing with the others: a
/// gyro whose turns do not match the GNSS course (wrong sign, wrong axis), or a GNSS course that does not match the path
/// of the fixes. It stays open while the stream is set aside and resolves after <c>clear_s</c> seconds of data once it
/// is used again (default 60).
/// </summary>
/// <remarks>The detection is the core's <c>StreamAgreement</c> with its <c>TrackOptions</c>; the default of
/// <see cref="ClearS"/> is a design choice.</remarks>
public sealed record SensorIsolatedRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Seconds of data after the stream was re-admitted after which the alert resolves (1-86400). Default 60.</summary>
    public double ClearS { get; init; } = 60;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) => RuleChecks.Range(prefix + ".clear_s", ClearS, 1, 86400);
}
