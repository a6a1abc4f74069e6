// Thresholds of the gated_burst rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>gated_burst</c>: at least <c>min_count</c> measurements rejected by the chi-square gate within <c>window_s</c>
/// seconds of data time open one alert; every further rejected measurement while it is open adds to its count; it
/// resolves after <c>clear_s</c> seconds of data without a rejected measurement. Only the sensors listed in
/// <c>sensors</c> count (default GNSS positions only: the filter routinely rejects single wheel and IMU samples and GNSS
/// velocities at stops and sharp changes of motion, which says nothing about a fault).
/// </summary>
/// <remarks>The defaults are a design choice (about three 1 Hz fixes out of thirty), not taken from a published
/// source.</remarks>
public sealed record GatedBurstRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Window the gated measurements must fall into, seconds (1-3600). Default 30.</summary>
    public double WindowS { get; init; } = 30;

    /// <summary>Gated measurements within the window that open an alert (2-1000). Default 3.</summary>
    public int MinCount { get; init; } = 3;

    /// <summary>Sensors whose gated measurements count (gnss_position, gnss_velocity, wheel, imu). Default gnss_position.</summary>
    public IReadOnlyList<string> Sensors { get; init; } = ["gnss_position"];

    /// <summary>Seconds of data without a gated measurement after which the alert resolves (1-86400). Default 120.</summary>
    public double ClearS { get; init; } = 120;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) =>
        RuleChecks.Range(prefix + ".window_s", WindowS, 1, 3600)
        ?? RuleChecks.Range(prefix + ".min_count", MinCount, 2, 1000)
        ?? RuleChecks.Sensors(prefix + ".sensors", Sensors)
        ?? RuleChecks.Range(prefix + ".clear_s", ClearS, 1, 86400);
}
