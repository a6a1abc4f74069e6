// Thresholds of the vehicle_silent rule.
namespace FusionService.Alerts;

/// <summary>
/// <c>vehicle_silent</c>: nothing received from a vehicle (server clock, any sensor) for more than <c>silent_s</c>
/// seconds. Checked every few seconds; the alert resolves at the first check after a measurement arrives again.
/// Default 900 s: trackers upload every 5-60 s while moving, so a quarter of an hour of nothing is not an upload pattern.
/// Silence for longer than this opens an alert; the vehicle has shown the status <c>silent</c> (list and dashboard) since
/// the service's shorter silence limit passed (setting <c>Alerts:SilentAfterS</c>, default 120 s), so keep this
/// threshold at or above that limit.
/// </summary>
/// <remarks>Checked by <see cref="VehicleSilenceScanner"/>; the upload interval is common practice.</remarks>
public sealed record VehicleSilentRule
{
    /// <summary>Whether the rule runs. Default true.</summary>
    public bool Enabled { get; init; } = true;

    /// <summary>Longest silence that is not an alert, seconds (1-604800). Default 900.</summary>
    public double SilentS { get; init; } = 900;

    /// <summary>The first invalid field as "field: reason", or null.</summary>
    public string? Validate(string prefix) => RuleChecks.Range(prefix + ".silent_s", SilentS, 1, 604800);

    /// <summary>Whether a vehicle last heard from at <paramref name="lastReceivedAt"/> is silent at <paramref name="now"/>.</summary>
    public bool IsSilent(DateTimeOffset lastReceivedAt, DateTimeOffset now) => Enabled && (now - lastReceivedAt).TotalSeconds > SilentS;
}
