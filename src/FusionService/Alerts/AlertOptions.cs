// Settings of section Alerts.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Alerts;

/// <summary>Settings of section <c>Alerts</c> (the thresholds themselves are per fleet: <see cref="AlertRuleSettings"/>).</summary>
public sealed class AlertOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Alerts";

    /// <summary>Seconds a fleet's rule settings are cached by the tracks (a PUT on this instance applies at once). Default 30.</summary>
    [Range(0, 3600)]
    public int RuleCacheSeconds { get; set; } = 30;

    /// <summary>Milliseconds between scans for silent vehicles. Default 10000.</summary>
    [Range(100, 3_600_000)]
    public int SilenceScanIntervalMs { get; set; } = 10_000;

    /// <summary>
    /// Hours of receipts read from the store at start-up to know which vehicles were sending; also how long a silent
    /// vehicle stays in the in-memory activity table before it is evicted. Default 24.
    /// </summary>
    [Range(1, 24 * 31)]
    public int SilenceLookbackHours { get; set; } = 24;

    /// <summary>
    /// Seconds without anything received from a vehicle (server clock, any sensor) after which it counts as silent: the
    /// one limit behind the status <c>silent</c> of <c>GET /v1/vehicles</c> (the default of its <c>silent_after_s</c>) and
    /// of the dashboard's fleet table, which reads it from <c>/settings.json</c>. Default 120: trackers upload every 5-60 s
    /// while moving (common practice), so at least two uploads were missed. A silent vehicle gets a <c>vehicle_silent</c>
    /// alert only when its silence lasts longer than its fleet's own alert threshold (<c>vehicle_silent.silent_s</c> of
    /// <c>/v1/alert-rules</c>, default 900 s): the status says "not heard lately", the alert "silent long enough to act".
    /// </summary>
    [Range(10, 86_400)]
    public double SilentAfterS { get; set; } = 120;
}
