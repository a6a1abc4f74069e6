// Feeds hand-made outcomes to one alert rule the way AlertEvaluator does (no track, no I/O).
using FusionService.Alerts;
using FusionService.Alerts.Rules;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Alerts;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>
/// One rule driven alone: each <see cref="Feed"/> advances the data-time clock as <see cref="AlertEvaluator"/> does (newest
/// measurement time, newest GNSS position time), lets the rule observe, and collects a resolve when due;
/// <see cref="Take"/> adds the changed open alert. The measurement values are invented; only times and kinds matter to
/// the rules.
/// </summary>
internal sealed class RuleFeed(VehicleAlertRule rule, AlertRuleSettings? settings = null)
{
    /// <summary>A data time to start from (2026-05-28, invented), µs since the Unix epoch.</summary>
    public const long T0 = 1_780_000_000_000_000;

    private long _nowUs = long.MinValue;
    private long _lastGnssUs = long.MinValue;
    private ulong _key;

    public AlertRuleSettings Settings { get; set; } = settings ?? AlertRuleSettings.Default;

    public List<AlertObservation> Observations { get; } = [];

    public static long At(double s) => T0 + (long)Math.Round(s * 1e6);

    /// <summary>A GNSS fix at <paramref name="s"/> seconds after <see cref="T0"/>, with a message key of its own.</summary>
    public Measurement Fix(double s) => Measurement.GnssPosition(At(s), ++_key, 46.12, 8.47, 3.0);

    public Measurement Velocity(double s) => Measurement.GnssVelocity(At(s), ++_key, 5.0, 0.0, 0.3);

    public Measurement Wheel(double s) => Measurement.WheelSpeed(At(s), ++_key, 5.0);

    public Measurement Imu(double s) => Measurement.Imu(At(s), ++_key, 0.0, 0.0);

    /// <summary>A running track's posterior at <paramref name="s"/> with the given speed and wheel-speed scale (variance in scale²).</summary>
    public static TrackState Running(double s, double speedMps = 0, double wheelScale = 1.0, double wheelScaleVariance = 1e-4)
    {
        var state = TrackState.Empty;
        state.TimeUs = At(s);
        state.HasPlane = true;
        state.Phase = TrackPhase.Running;
        state.X[StateIndex.SpeedMps] = speedMps;
        state.X[StateIndex.WheelScale] = wheelScale;
        state.P[(StateIndex.WheelScale * StateIndex.Count) + StateIndex.WheelScale] = wheelScaleVariance;
        return state;
    }

    public static MeasurementOutcome Accepted(double nis, int dimension) => new(OutcomeKind.Accepted, nis, dimension, 13.8, false, 0);

    public static MeasurementOutcome Gated(double nis = 40) => new(OutcomeKind.Gated, nis, 2, 13.8, false, 0);

    /// <summary>Feeds one outcome of <paramref name="m"/> (a measurement fed twice counts as re-processed).</summary>
    public void Feed(Measurement m, MeasurementOutcome outcome, TrackState? posterior = null, bool isReplay = false)
    {
        _nowUs = Math.Max(_nowUs, m.TimeUs);
        if (m.Kind == SensorKind.GnssPosition)
        {
            _lastGnssUs = Math.Max(_lastGnssUs, m.TimeUs);
        }

        var state = posterior ?? TrackState.Empty;
        rule.Observe(m, outcome, state, isReplay, new AlertClock(_nowUs, _lastGnssUs), Settings);
        if (rule.ResolveIfCleared(Settings, _nowUs) is { } resolved)
        {
            Observations.Add(resolved);
        }
    }

    /// <summary>Collects the changed open alert, if any; returns everything collected so far.</summary>
    public List<AlertObservation> Take()
    {
        if (rule.TakeChange() is { } change)
        {
            Observations.Add(change);
        }

        return Observations;
    }
}
