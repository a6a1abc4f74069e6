// Thresholds of the gnss_silent_while_moving rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>gnss_silent_while_moving</c>: no GNSS position (accepted or not) for more than <c>silent_s</c> seconds of data
/// while the estimated speed exceeds <c>min_speed_mps</c>; it resolves after <c>clear_s</c> seconds of data in which the
/// condition did not hold. Defaults 30 s, 2 m/s and 30 s: half a minute without a fix while driving is more than an
/// underpass.
/// </summary>
/// <remarks>The defaults are a design choice: trackers compute a fix every second (common practice).</remarks>
public sealed record GnssSilentRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Longest gap between GNSS positions that is not an alert, seconds (1-86400). Default 30.</summary>
    public double SilentS { get; init; } = 30;

    /// <summary>Estimated speed above which the vehicle counts as moving, m/s (0-100). Default 2.</summary>
    public double MinSpeedMps { get; init; } = 2;

    /// <summary>Seconds of data without the condition after which the alert resolves (1-86400). Default 30.</summary>
    public double ClearS { get; init; } = 30;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) =>
        RuleChecks.Range(prefix + ".silent_s", SilentS, 1, 86400)
        ?? RuleChecks.Range(prefix + ".min_speed_mps", MinSpeedMps, 0, 100)
        ?? RuleChecks.Range(prefix + ".clear_s", ClearS, 1, 86400);
}
