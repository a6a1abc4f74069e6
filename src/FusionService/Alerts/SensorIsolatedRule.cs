// Thresholds of the sensor_isolated rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>sensor_isolated</c>: the track has stopped fusing a stream because it keeps disagreeing with independent ones — a gyro
/// whose turns do not match the GNSS course (wrong sign, wrong axis), or a GNSS course that does not match the path of the
/// fixes (the core's <c>StreamAgreement</c> and its <c>TrackOptions</c>). It stays open while the stream is isolated and
/// resolves after <see cref="ClearS"/> seconds of data once it is re-admitted (default 60, a design choice).
/// </summary>
public sealed record SensorIsolatedRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Seconds of data after the stream was re-admitted after which the alert resolves (1-86400). Default 60.</summary>
    public double ClearS { get; init; } = 60;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) => RuleChecks.Range(prefix + ".clear_s", ClearS, 1, 86400);
}
