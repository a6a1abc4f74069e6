// The measurement_unusable rule with its state.
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using static FusionService.Alerts.Rules.AlertText;

namespace FusionService.Alerts.Rules;

/// <summary>
/// <c>measurement_unusable</c> (always on; see <see cref="AlertKinds.MeasurementUnusable"/>): each measurement the filter
/// failed on opens the alert or adds to its count; one re-processed after a late arrival counts once. It resolves after
/// <see cref="AlertKinds.MeasurementUnusableClearS"/> seconds of data without another.
/// </summary>
internal sealed class MeasurementUnusableAlert() : VehicleAlertRule(AlertKinds.MeasurementUnusable)
{
    private readonly HashSet<AlertEventKey> _unusable = [];

    /// <inheritdoc/>
    public override bool IsEnabled(AlertRuleSettings settings) => true;

    /// <inheritdoc/>
    public override double ClearS(AlertRuleSettings settings) => AlertKinds.MeasurementUnusableClearS;

    /// <inheritdoc/>
    public override void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings)
    {
        if (outcome.Kind != OutcomeKind.Unusable || !_unusable.Add(AlertEventKey.Of(m)))
        {
            return;
        }

        long t = m.TimeUs;
        var e = Episode;
        e.Raise(t, t);
        e.Count = e.Open && e.Count > 0 ? e.Count + 1 : 1;
        e.Summary = e.Count == 1
            ? Inv($"A {AlertKinds.SensorName(m.Kind)} measurement was skipped: the filter failed numerically on it")
            : Inv($"{e.Count} measurements were skipped: the filter failed numerically on them");
        e.Details = new JsonObject
        {
            ["skipped"] = e.Count,
            ["last_sensor"] = AlertKinds.SensorName(m.Kind),
            ["last_measured_at"] = Time(t),
            ["last_reason"] = outcome.Failure,
            ["clear_s"] = AlertKinds.MeasurementUnusableClearS,
        };
    }

    /// <inheritdoc/>
    protected override void ForgetEpisode() => _unusable.Clear();
}
