// Thresholds of the wheel_scale_out_of_band rule.
using System.Globalization;

namespace FusionService.Alerts;

/// <summary>
/// <c>wheel_scale_out_of_band</c>: the estimated wheel-speed scale factor lies outside the band [<c>lower</c>,
/// <c>upper</c>] by more than <c>confidence_z</c> of its standard deviation, and that standard deviation is at most
/// <c>max_sd</c> (so the estimate is settled). A scale error beyond 3 % (the default band 0.97-1.03) points at a wrong
/// tyre size or a worn or under-inflated tyre. The condition must hold for <c>hold_s</c> seconds of data in a row before
/// the alert opens, and the alert resolves after <c>clear_s</c> seconds of data in which it did not hold.
/// </summary>
/// <remarks>Uncalibrated odometer scale errors of 0.5-2 % are usual (from memory); z = 1.96 is the two-sided 95 % normal
/// quantile (derived). The hold keeps a van whose true scale sits at the band's edge from alerting on a passing
/// excursion.</remarks>
public sealed record WheelScaleRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Lower end of the accepted band (0.5-1). Default 0.97.</summary>
    public double Lower { get; init; } = 0.97;

    /// <summary>Upper end of the accepted band (1-1.5). Default 1.03.</summary>
    public double Upper { get; init; } = 1.03;

    /// <summary>Largest standard deviation of the estimate for which the rule judges (0.0001-0.1). Default 0.005.</summary>
    public double MaxSd { get; init; } = 0.005;

    /// <summary>Standard deviations the estimate must lie beyond the band (0-10). Default 1.96.</summary>
    public double ConfidenceZ { get; init; } = 1.96;

    /// <summary>Seconds of data the condition must hold without a break before the alert opens (0-86400). Default 120.</summary>
    public double HoldS { get; init; } = 120;

    /// <summary>Seconds of data without the condition after which the alert resolves (1-86400). Default 600.</summary>
    public double ClearS { get; init; } = 600;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) =>
        RuleChecks.Range(prefix + ".lower", Lower, 0.5, 1)
        ?? RuleChecks.Range(prefix + ".upper", Upper, 1, 1.5)
        ?? (Lower < Upper ? null : string.Create(CultureInfo.InvariantCulture, $"{prefix}.upper: must be above lower ({Lower})"))
        ?? RuleChecks.Range(prefix + ".max_sd", MaxSd, 0.0001, 0.1)
        ?? RuleChecks.Range(prefix + ".confidence_z", ConfidenceZ, 0, 10)
        ?? RuleChecks.Range(prefix + ".hold_s", HoldS, 0, 86400)
        ?? RuleChecks.Range(prefix + ".clear_s", ClearS, 1, 86400);
}
