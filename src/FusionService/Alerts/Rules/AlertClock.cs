// The data-time clock the alert rules share.
namespace FusionService.Alerts.Rules;

/// <summary>
/// Data time as the evaluator sees it after an outcome: <paramref name="NowUs"/> the newest measurement time seen,
/// <paramref name="LastGnssUs"/> the newest GNSS position time seen (<see cref="long.MinValue"/> before the first), both
/// µs since the Unix epoch.
/// </summary>
internal readonly record struct AlertClock(long NowUs, long LastGnssUs);
