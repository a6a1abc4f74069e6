// The gnss_silent_while_moving rule.
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using static FusionService.Alerts.Rules.AlertText;

namespace FusionService.Alerts.Rules;

/// <summary>
/// <c>gnss_silent_while_moving</c> (thresholds and definition: <see cref="GnssSilentRule"/>): judged at every outcome of
/// a running track from the time since the newest GNSS position (<see cref="AlertClock.LastGnssUs"/>) and the estimated
/// speed; the alert starts at that position and reports the longest gap seen.
/// </summary>
internal sealed class GnssSilentAlert() : VehicleAlertRule(AlertKinds.GnssSilentWhileMoving)
{
    /// <inheritdoc/>
    public override bool IsEnabled(AlertRuleSettings settings) => settings.GnssSilentWhileMoving.Enabled;

    /// <inheritdoc/>
    public override double ClearS(AlertRuleSettings settings) => settings.GnssSilentWhileMoving.ClearS;

    /// <inheritdoc/>
    public override void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings)
    {
        var rule = settings.GnssSilentWhileMoving;
        if (!posterior.HasPlane || posterior.Phase != TrackPhase.Running || !rule.Enabled || clock.LastGnssUs == long.MinValue)
        {
            return;
        }

        double speedMps = posterior.X[StateIndex.SpeedMps];
        double gapS = (clock.NowUs - clock.LastGnssUs) / 1e6;
        bool silentWhileMoving = gapS > rule.SilentS && Math.Abs(speedMps) > rule.MinSpeedMps;
        if (!silentWhileMoving)
        {
            return;
        }

        var e = Episode;
        double maxGap = Math.Max(gapS, e.Details?["silent_s"]?.GetValue<double>() ?? 0);
        bool newOrLonger = !e.Open || e.StartUs != clock.LastGnssUs || gapS >= maxGap;
        if (!newOrLonger)
        {
            return;
        }

        e.Raise(clock.LastGnssUs, clock.NowUs);
        e.Count = 1;
        e.Summary = Inv($"No GNSS position for {maxGap:0} s while moving at {Math.Abs(speedMps):0.0} m/s");
        e.Details = new JsonObject
        {
            ["silent_s"] = maxGap,
            ["speed_mps"] = Math.Abs(speedMps),
            ["last_fix_at"] = Time(clock.LastGnssUs),
            ["threshold_s"] = rule.SilentS,
            ["min_speed_mps"] = rule.MinSpeedMps,
        };
    }
}
