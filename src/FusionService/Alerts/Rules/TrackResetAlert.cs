// The track_reset rule with its state.
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using static FusionService.Alerts.Rules.AlertText;

namespace FusionService.Alerts.Rules;

/// <summary>
/// <c>track_reset</c> (thresholds and definition: <see cref="TrackResetRule"/>): each reset of the track opens the alert
/// or adds to its count; a reset re-processed after a late arrival counts once.
/// </summary>
internal sealed class TrackResetAlert() : VehicleAlertRule(AlertKinds.TrackReset)
{
    private readonly HashSet<AlertEventKey> _resets = [];

    /// <inheritdoc/>
    public override bool IsEnabled(AlertRuleSettings settings) => settings.TrackReset.Enabled;

    /// <inheritdoc/>
    public override double ClearS(AlertRuleSettings settings) => settings.TrackReset.ClearS;

    /// <inheritdoc/>
    public override void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings)
    {
        if (!settings.TrackReset.Enabled || outcome.Kind != OutcomeKind.TrackReset || !_resets.Add(AlertEventKey.Of(m)))
        {
            return;
        }

        long t = m.TimeUs;
        var e = Episode;
        e.Raise(t, t);
        e.Count = e.Open && e.Count > 0 ? e.Count + 1 : 1;
        e.Summary = e.Count == 1
            ? "The track was re-initialised at a new position (a jump or a relocation)"
            : Inv($"The track was re-initialised {e.Count} times");
        e.Details = new JsonObject
        {
            ["resets"] = e.Count,
            ["last_reset_at"] = Time(t),
            ["position_shift_m"] = Num(outcome.PositionShiftM),
            ["nis"] = Num(outcome.Nis),
            ["clear_s"] = settings.TrackReset.ClearS,
        };
    }

    /// <inheritdoc/>
    protected override void ForgetEpisode() => _resets.Clear();
}
