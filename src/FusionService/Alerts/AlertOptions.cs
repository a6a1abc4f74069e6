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
}
