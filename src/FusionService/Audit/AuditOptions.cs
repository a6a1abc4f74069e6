// Limits and thresholds of the diagnostics and explanation endpoints.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Audit;

/// <summary>Settings of section <c>Audit</c>.</summary>
public sealed class AuditOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Audit";

    /// <summary>Longest diagnostics window (to - from), hours; longer requests are answered 400. Default 24.</summary>
    [Range(0.001, 24 * 366)]
    public double MaxDiagnosticsWindowHours { get; set; } = 24;

    /// <summary>A gap between GNSS position fixes longer than this while the vehicle moved is an outage, seconds. Default 5.</summary>
    [Range(0.001, 86400)]
    public double GnssOutageMinGapS { get; set; } = Estimation.Diagnostics.GnssOutageDetector.DefaultMinGapS;

    /// <summary>A fused speed at or above this shows that the vehicle moved, m/s. Default 1.</summary>
    [Range(0, 100)]
    public double MovingSpeedMps { get; set; } = Estimation.Diagnostics.GnssOutageDetector.DefaultMovingSpeedMps;

    /// <summary>Fewest fused measurements of a sensor for a NIS verdict other than insufficient_data. Default 10.</summary>
    [Range(1, 1_000_000)]
    public int NisMinimumCount { get; set; } = 10;

    /// <summary>Number of lags h of the whiteness test of each sensor's innovations (in measurements of that sensor). Default 10.</summary>
    [Range(1, 100)]
    public int WhitenessLags { get; set; } = Estimation.Diagnostics.InnovationWhitenessTest.DefaultLags;

    /// <summary>Fewest fused measurements with an innovation for a whiteness verdict other than insufficient_data. Default 50.</summary>
    [Range(2, 1_000_000)]
    public int WhitenessMinimumCount { get; set; } = Estimation.Diagnostics.InnovationWhitenessTest.DefaultMinimumSamples;

    /// <summary>Largest <c>window_s</c> of an explanation, seconds; larger requests are answered 400. Default 300.</summary>
    [Range(0.001, 86400)]
    public double MaxExplainWindowS { get; set; } = 300;

    /// <summary>
    /// How far before the explanation window a replay may start when no stored checkpoint precedes the window, hours.
    /// Data older than that is left out, and the response says the replay is not exact. Default 12.
    /// </summary>
    [Range(0.001, 24 * 366)]
    public double MaxReplayHours { get; set; } = 12;
}
