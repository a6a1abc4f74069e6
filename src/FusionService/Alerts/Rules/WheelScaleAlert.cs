// The wheel_scale_out_of_band rule with its state.
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using static FusionService.Alerts.Rules.AlertText;

namespace FusionService.Alerts.Rules;

/// <summary>
/// <c>wheel_scale_out_of_band</c> (thresholds, definition and sources: <see cref="WheelScaleRule"/>): judged at every
/// outcome of a running track from the estimated wheel-speed scale and its standard deviation; remembers since when the
/// condition holds without a break, opens the alert after <see cref="WheelScaleRule.HoldS"/> and refreshes its numbers
/// once a minute of data.
/// </summary>
internal sealed class WheelScaleAlert() : VehicleAlertRule(AlertKinds.WheelScaleOutOfBand)
{
    private const long RefreshUs = 60_000_000;
    private long _outsideSinceUs = long.MinValue;

    /// <inheritdoc/>
    public override bool IsEnabled(AlertRuleSettings settings) => settings.WheelScaleOutOfBand.Enabled;

    /// <inheritdoc/>
    public override double ClearS(AlertRuleSettings settings) => settings.WheelScaleOutOfBand.ClearS;

    /// <inheritdoc/>
    public override void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings)
    {
        var rule = settings.WheelScaleOutOfBand;
        if (!posterior.HasPlane || posterior.Phase != TrackPhase.Running || !rule.Enabled)
        {
            return;
        }

        double scale = posterior.X[StateIndex.WheelScale];
        double variance = posterior.P[(StateIndex.WheelScale * StateIndex.Count) + StateIndex.WheelScale];
        double sd = Math.Sqrt(Math.Max(0, variance));
        bool outside = double.IsFinite(scale) && double.IsFinite(sd) && sd <= rule.MaxSd
            && (scale - (rule.ConfidenceZ * sd) > rule.Upper || scale + (rule.ConfidenceZ * sd) < rule.Lower);
        if (!outside)
        {
            _outsideSinceUs = long.MinValue;
            return;
        }

        long nowUs = clock.NowUs;
        if (_outsideSinceUs == long.MinValue)
        {
            _outsideSinceUs = nowUs;
        }

        var e = Episode;
        if (nowUs - _outsideSinceUs < (long)(rule.HoldS * 1e6) && !e.Open)
        {
            return;
        }

        bool opening = !e.Open, wasDirty = e.Dirty;
        e.Raise(nowUs, nowUs);
        e.Count = 1;
        if (opening || nowUs - e.DetailsUs >= RefreshUs)
        {
            // The estimate moves a little with every update: refresh the numbers once a minute of data, not every sample.
            e.DetailsUs = nowUs;
            e.Summary = Inv($"Wheel-speed scale {scale:0.0000} ± {sd:0.0000} outside {rule.Lower:0.00}-{rule.Upper:0.00}: check the tyre size and pressure");
            e.Details = new JsonObject
            {
                ["wheel_scale"] = scale,
                ["wheel_scale_sd"] = sd,
                ["lower"] = rule.Lower,
                ["upper"] = rule.Upper,
                ["confidence_z"] = rule.ConfidenceZ,
                ["max_sd"] = rule.MaxSd,
            };
        }
        else
        {
            e.Dirty = wasDirty;
        }
    }
}
