// The sensor_isolated rule.
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using static FusionService.Alerts.Rules.AlertText;

namespace FusionService.Alerts.Rules;

/// <summary>
/// <c>sensor_isolated</c> (definition: <see cref="SensorIsolatedRule"/>): open while a stream is isolated
/// (<see cref="StreamAgreement"/>). One alert per vehicle; its details name every isolated stream with its evidence,
/// refreshed when the set changes and otherwise once a minute of data.
/// </summary>
internal sealed class SensorIsolatedAlert() : VehicleAlertRule(AlertKinds.SensorIsolated)
{
    private const long RefreshUs = 60_000_000;

    /// <inheritdoc/>
    public override bool IsEnabled(AlertRuleSettings settings) => settings.SensorIsolated.Enabled;

    /// <inheritdoc/>
    public override double ClearS(AlertRuleSettings settings) => settings.SensorIsolated.ClearS;

    /// <inheritdoc/>
    public override void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings)
    {
        ref readonly var agreement = ref posterior.Agreement;
        if (!settings.SensorIsolated.Enabled || !(agreement.GyroIsolated || agreement.CourseIsolated))
        {
            return;
        }

        var e = Episode;
        long sinceUs = agreement.GyroIsolated && agreement.CourseIsolated
            ? Math.Min(agreement.GyroIsolatedSinceUs, agreement.CourseIsolatedSinceUs)
            : agreement.GyroIsolated ? agreement.GyroIsolatedSinceUs : agreement.CourseIsolatedSinceUs;
        var streams = new JsonArray();
        if (agreement.GyroIsolated)
        {
            streams.Add("imu");
        }

        if (agreement.CourseIsolated)
        {
            streams.Add("gnss_course");
        }

        bool changed = !e.Open || e.Details?["streams"]?.ToJsonString() != streams.ToJsonString();
        bool wasDirty = e.Dirty;
        e.Raise(sinceUs, m.TimeUs);
        if (!changed)
        {
            // An isolation may last all day: refresh the stored alert once a minute of data, not with every sample.
            if (clock.NowUs - e.DetailsUs < RefreshUs)
            {
                e.Dirty = wasDirty;
            }
            else
            {
                e.DetailsUs = clock.NowUs;
            }

            return;
        }

        e.DetailsUs = clock.NowUs;
        e.Count = 1;
        var parts = new List<string>(2);
        var details = new JsonObject { ["streams"] = streams };
        if (agreement.GyroIsolated)
        {
            parts.Add(Inv($"the gyro (its last turn read {Degrees(agreement.LastTurnRad + agreement.LastTurnMismatchRad):0} degrees where the GNSS course turned {Degrees(agreement.LastTurnRad):0}: wrong sign or axis?)"));
            details["imu_isolated_since"] = Time(agreement.GyroIsolatedSinceUs);
            details["imu_turn_mismatch_rad"] = Num(agreement.LastTurnMismatchRad);
            details["gnss_course_turn_rad"] = Num(agreement.LastTurnRad);
        }

        if (agreement.CourseIsolated)
        {
            parts.Add(Inv($"the GNSS course ({Degrees(agreement.CourseOffsetRad):0} degrees off the path of the fixes: receiver misconfigured?)"));
            details["gnss_course_isolated_since"] = Time(agreement.CourseIsolatedSinceUs);
            details["gnss_course_offset_rad"] = Num(agreement.CourseOffsetRad);
        }

        e.Summary = "No longer fused, disagrees with the other sensors: " + string.Join("; ", parts);
        e.Details = details;
    }
}
