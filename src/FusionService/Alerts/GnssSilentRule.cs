// Thresholds of the gnss_silent_while_moving rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>gnss_silent_while_moving</c>: no GNSS position (accepted or not) for more than <see cref="SilentS"/> seconds of data
/// while the estimated speed exceeds <see cref="MinSpeedMps"/>; it resolves after <see cref="ClearS"/> seconds of data in
/// which the condition did not hold. Defaults (30 s, 2 m/s, 30 s) are a design choice: trackers compute a fix every
/// second (common practice), so half a minute without one while driving is more than an underpass.
/// </summary>
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
