// The common shape of a per-vehicle alert rule.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Alerts;

namespace FusionService.Alerts.Rules;

/// <summary>
/// One per-vehicle alert rule with its own state: it observes the track's outcomes (<see cref="Observe"/>), keeps one
/// <see cref="AlertEpisode"/> of its kind, reports it when it changed (<see cref="TakeChange"/>) and resolves it after
/// <see cref="ClearS"/> seconds of data without the condition, or at once when the rule is turned off
/// (<see cref="ResolveIfCleared"/>). The thresholds are read from the settings passed in, which may change between calls.
/// Not thread-safe.
/// </summary>
internal abstract class VehicleAlertRule(string kind)
{
    /// <summary>The alert kind (<see cref="AlertKinds"/>).</summary>
    public string Kind { get; } = kind;

    /// <summary>The current episode (a fresh, closed one after each resolve).</summary>
    protected AlertEpisode Episode { get; private set; } = new();

    /// <summary>Whether the rule runs under <paramref name="settings"/>.</summary>
    public abstract bool IsEnabled(AlertRuleSettings settings);

    /// <summary>Seconds of data without the condition after which an open alert resolves.</summary>
    public abstract double ClearS(AlertRuleSettings settings);

    /// <summary>
    /// Feeds one outcome (never a duplicate or conflict); <paramref name="clock"/> already includes it. A disabled rule
    /// observes nothing.
    /// </summary>
    public abstract void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings);

    /// <summary>The open episode when it changed since the last call, or null.</summary>
    public AlertObservation? TakeChange()
    {
        if (!Episode.Open || !Episode.Dirty)
        {
            return null;
        }

        Episode.Dirty = false;
        return Episode.ToObservation(Kind, resolve: false);
    }

    /// <summary>
    /// The resolve of the open episode when <see cref="ClearS"/> seconds of data passed since it was last seen at
    /// <paramref name="nowUs"/> (and <see cref="StaysOpen"/> does not hold) or the rule is off; null otherwise.
    /// </summary>
    public AlertObservation? ResolveIfCleared(AlertRuleSettings settings, long nowUs)
    {
        bool disabled = !IsEnabled(settings);
        if (!Episode.Open || (!disabled && nowUs - Episode.LastUs < (long)(ClearS(settings) * 1e6)))
        {
            return null;
        }

        if (!disabled && StaysOpen(settings))
        {
            return null;
        }

        var resolved = Episode.ToObservation(Kind, resolve: true);
        ForgetEpisode();
        Episode = new AlertEpisode();
        return resolved;
    }

    /// <summary>Whether the condition still holds although nothing refreshed the episode for its clear time.</summary>
    protected virtual bool StaysOpen(AlertRuleSettings settings) => false;

    /// <summary>Drops what the rule remembered about the episode being resolved.</summary>
    protected virtual void ForgetEpisode()
    {
    }
}
