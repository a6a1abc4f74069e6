// The moved_without_driving rule.
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using static FusionService.Alerts.Rules.AlertText;

namespace FusionService.Alerts.Rules;

/// <summary>
/// <c>moved_without_driving</c> (definition: <see cref="MovedWithoutDrivingRule"/>): open while the track takes the
/// vehicle to be carried; a new carry (another <see cref="TrackState.CarriedSinceUs"/>) starts its details afresh, which
/// GNSS velocities refresh.
/// </summary>
internal sealed class MovedWithoutDrivingAlert() : VehicleAlertRule(AlertKinds.MovedWithoutDriving)
{
    /// <inheritdoc/>
    public override bool IsEnabled(AlertRuleSettings settings) => settings.MovedWithoutDriving.Enabled;

    /// <inheritdoc/>
    public override double ClearS(AlertRuleSettings settings) => settings.MovedWithoutDriving.ClearS;

    /// <inheritdoc/>
    public override void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings)
    {
        if (!settings.MovedWithoutDriving.Enabled || !outcome.Carried)
        {
            return;
        }

        var e = Episode;
        bool opening = !e.Open || e.StartUs != posterior.CarriedSinceUs;
        e.Raise(posterior.CarriedSinceUs, m.TimeUs);
        if (!opening && m.Kind != SensorKind.GnssVelocity)
        {
            return;
        }

        e.Count = 1;
        double speedMps = Math.Abs(posterior.X[StateIndex.SpeedMps]);
        e.Summary = Inv($"Moving at {speedMps:0.0} m/s by GNSS while the wheels are still: towed, on a ferry or lifted? Wheel speed is set aside until they turn again");
        e.Details = new JsonObject
        {
            ["carried_since"] = Time(posterior.CarriedSinceUs),
            ["speed_mps"] = speedMps,
            ["last_seen_at"] = Time(m.TimeUs),
        };
    }
}
