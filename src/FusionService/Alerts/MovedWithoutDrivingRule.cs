// Thresholds of the moved_without_driving rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>moved_without_driving</c>: the vehicle seems to be carried (towed, on a ferry, lifted): GNSS reports steady motion
/// while the wheels read zero (by default 1.5 m/s or more for 5 s). It stays open while the carry lasts and resolves
/// after <c>clear_s</c> seconds of data without one (default 60).
/// </summary>
/// <remarks>The detection is the core's <c>TrackOptions.CarriedMinSpeedMps</c> and <c>CarriedAfterS</c>; the default of
/// <see cref="ClearS"/> is a design choice.</remarks>
public sealed record MovedWithoutDrivingRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Seconds of data after the carry ended after which the alert resolves (1-86400). Default 60.</summary>
    public double ClearS { get; init; } = 60;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) => RuleChecks.Range(prefix + ".clear_s", ClearS, 1, 86400);
}
