// Thresholds of the track_reset rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>track_reset</c>: the position estimate was started afresh at a new place after the filter kept rejecting the
/// GNSS fixes (a jump or a relocation such as towing). Further resets while the alert is unresolved add to its count; it
/// resolves after <c>clear_s</c> seconds of data without a reset (default 600).
/// </summary>
/// <remarks>The default of <see cref="ClearS"/> is a design choice.</remarks>
public sealed record TrackResetRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Seconds of data without a reset after which the alert resolves (1-86400). Default 600.</summary>
    public double ClearS { get; init; } = 600;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) => RuleChecks.Range(prefix + ".clear_s", ClearS, 1, 86400);
}
