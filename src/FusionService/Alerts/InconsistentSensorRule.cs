// Thresholds of the inconsistent_sensor rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>inconsistent_sensor</c>: a sensor's measurements disagree with the track more (or, when
/// <c>flag_too_pessimistic</c> is set, less) than the sensor's stated accuracy allows. The normalised innovations
/// squared (NIS) of each sensor are averaged over consecutive windows of <c>window_samples</c> samples; a mean outside
/// the two-sided chi-square region of probability <c>probability</c> for <c>consecutive_windows</c> windows in a row
/// opens the alert. For the sensors in <c>whiteness_sensors</c> the same windows are also tested for correlated errors
/// (Ljung-Box test over <c>whiteness_lags</c> lags at 5 %): errors that keep pulling the same way for
/// <c>consecutive_windows</c> windows raise it as well. It resolves after <c>clear_s</c> seconds of data in which no
/// sensor met either condition. Rejected measurements and re-processed ones (after a late arrival) are left out. Only the
/// sensors in <c>sensors</c> are judged.
/// </summary>
/// <remarks>
/// For a consistent filter K times the mean NIS is chi-square with the windows' total degrees of freedom
/// (<see cref="Estimation.Diagnostics.NisConsistencyTest"/>; Bar-Shalom, Li and Kirubarajan 2001, NIS test; section
/// from memory). Because a consistent filter still leaves the 95 % region in one window of twenty, an alert needs
/// <see cref="ConsecutiveWindows"/> windows in a row outside it (a design choice, not from a source). A mean below the
/// region counts only when <see cref="FlagTooPessimistic"/> is set: on clean invented delivery rounds this filter's
/// windowed mean NIS lies below the region for the wheel (about 0.03 for 1 degree of freedom), the IMU (about 0.6-0.8
/// for 2) and at times for GNSS positions (about 1.6 for 2, lower end 1.63), because its process noise is deliberately
/// generous; that costs a little accuracy but is no fault, while a mean above the region is one.
/// <para>
/// The whiteness test is <see cref="Estimation.Diagnostics.InnovationWhitenessTest"/> (Mehra 1970, Ljung and Box 1978).
/// Only GNSS position is judged so by default: on the demo fleet this filter's GNSS speed innovations are correlated
/// (lag-1 autocorrelation about 0.5, measured on the demo's diagnostics) on every van, and the wheel's at 10 Hz slightly,
/// which the diagnostics report but which would make the alert fire for every vehicle.
/// </para>
/// </remarks>
public sealed record InconsistentSensorRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Samples per window (10-10000). Default 100.</summary>
    public int WindowSamples { get; init; } = 100;

    /// <summary>Consecutive windows outside the region that raise the alert (1-100). Default 3.</summary>
    public int ConsecutiveWindows { get; init; } = 3;

    /// <summary>Probability of the two-sided region (0.5-0.9999). Default 0.95.</summary>
    public double Probability { get; init; } = 0.95;

    /// <summary>Sensors judged (gnss_position, gnss_velocity, wheel, imu). Default all four.</summary>
    public IReadOnlyList<string> Sensors { get; init; } = ["gnss_position", "gnss_velocity", "wheel", "imu"];

    /// <summary>Whether a mean below the region (too pessimistic) also counts. Default false.</summary>
    public bool FlagTooPessimistic { get; init; }

    /// <summary>Sensors whose innovations are also tested for whiteness in each window (empty: none). Default gnss_position.</summary>
    public IReadOnlyList<string> WhitenessSensors { get; init; } = ["gnss_position"];

    /// <summary>Lags h of the whiteness test, in measurements of the sensor (1-50, below a fifth of <c>window_samples</c>). Default 10.</summary>
    public int WhitenessLags { get; init; } = Estimation.Diagnostics.InnovationWhitenessTest.DefaultLags;

    /// <summary>Seconds of data without the condition after which the alert resolves (1-86400). Default 300.</summary>
    public double ClearS { get; init; } = 300;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) =>
        RuleChecks.Range(prefix + ".window_samples", WindowSamples, 10, 10000)
        ?? RuleChecks.Range(prefix + ".consecutive_windows", ConsecutiveWindows, 1, 100)
        ?? RuleChecks.Range(prefix + ".probability", Probability, 0.5, 0.9999)
        ?? RuleChecks.Sensors(prefix + ".sensors", Sensors)
        ?? (WhitenessSensors is { Count: 0 } ? null : RuleChecks.Sensors(prefix + ".whiteness_sensors", WhitenessSensors))
        ?? RuleChecks.Range(prefix + ".whiteness_lags", WhitenessLags, 1, Math.Min(50, WindowSamples / 5))
        ?? RuleChecks.Range(prefix + ".clear_s", ClearS, 1, 86400);
}
