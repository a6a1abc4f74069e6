// The per-vehicle alert rules over the track's outcomes, composed (no I/O).
using FusionService.Alerts.Rules;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Alerts;

namespace FusionService.Alerts;

/// <summary>
/// Evaluates the per-vehicle alert rules (<c>gated_burst</c>, <c>inconsistent_sensor</c> (mean NIS and, through
/// <see cref="WhitenessWindow"/>, innovation whiteness), <c>gnss_silent_while_moving</c>,
/// <c>track_reset</c>, <c>wheel_scale_out_of_band</c>, <c>moved_without_driving</c>, <c>sensor_isolated</c>,
/// <c>measurement_unusable</c> (always on, see <see cref="AlertKinds.MeasurementUnusable"/>); see their settings types for the definitions and defaults) from
/// the outcomes of one vehicle's track, on data time: "now" is the newest measurement time seen, so the result does not
/// depend on when or in which batches the data arrived. <see cref="TakeChanges"/> returns what changed since the last
/// call as absolute observations (count so far, start, newest time), which the store applies idempotently; a track that
/// re-processes its stored data after a restart therefore produces no duplicate alerts. Each rule is a class of its own
/// in <c>Alerts/Rules/</c> with its own state (<see cref="VehicleAlertRule"/>); this class keeps the data-time clock
/// they share and the order in which their changes are reported. No I/O; not thread-safe (one track grain at a time).
/// </summary>
public sealed class AlertEvaluator
{
    // The order resolves are reported in within one outcome.
    private readonly VehicleAlertRule[] _rules =
    [
        new GatedBurstAlert(),
        new TrackResetAlert(),
        new InconsistentSensorAlert(),
        new GnssSilentAlert(),
        new WheelScaleAlert(),
        new MovedWithoutDrivingAlert(),
        new SensorIsolatedAlert(),
        new MeasurementUnusableAlert(),
    ];

    // The order open alerts are reported in by TakeChanges: that of AlertKinds.All.
    private readonly VehicleAlertRule[] _changeOrder;
    private readonly List<AlertObservation> _pending = [];
    private long _nowUs = long.MinValue;
    private long _lastGnssUs = long.MinValue;

    /// <summary>Creates an evaluator with <paramref name="settings"/>.</summary>
    public AlertEvaluator(AlertRuleSettings settings)
    {
        ArgumentNullException.ThrowIfNull(settings);
        Settings = settings;
        _changeOrder = [.. _rules.OrderBy(r => IndexOf(r.Kind))];
    }

    /// <summary>The thresholds in force; may be replaced between observations (a PUT of the fleet's rules).</summary>
    public AlertRuleSettings Settings { get; set; }

    /// <summary>Feeds one outcome of the track (the arguments of <see cref="ITrackObserver.OnOutcome"/>).</summary>
    public void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay)
    {
        if (outcome.Kind is OutcomeKind.Duplicate or OutcomeKind.Conflict)
        {
            return;
        }

        _nowUs = Math.Max(_nowUs, m.TimeUs);
        if (m.Kind == SensorKind.GnssPosition)
        {
            _lastGnssUs = Math.Max(_lastGnssUs, m.TimeUs);
        }

        var settings = Settings;
        var clock = new AlertClock(_nowUs, _lastGnssUs);
        foreach (var rule in _rules)
        {
            rule.Observe(m, outcome, posterior, isReplay, clock, settings);
        }

        foreach (var rule in _rules)
        {
            if (rule.ResolveIfCleared(settings, _nowUs) is { } resolved)
            {
                _pending.Add(resolved);
            }
        }
    }

    /// <summary>The observations since the last call, oldest first (a resolve precedes a new episode of the same kind).</summary>
    public IReadOnlyList<AlertObservation> TakeChanges()
    {
        foreach (var rule in _changeOrder)
        {
            if (rule.TakeChange() is { } change)
            {
                _pending.Add(change);
            }
        }

        var changes = _pending.ToArray();
        _pending.Clear();
        return changes;
    }

    private static int IndexOf(string kind)
    {
        for (int i = 0; i < AlertKinds.All.Count; i++)
        {
            if (AlertKinds.All[i] == kind)
            {
                return i;
            }
        }

        throw new InvalidOperationException("alert kind " + kind + " is not listed in AlertKinds.All");
    }
}
