// The gated_burst rule with its state.
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using static FusionService.Alerts.Rules.AlertText;

namespace FusionService.Alerts.Rules;

/// <summary>
/// <c>gated_burst</c> (thresholds and definition: <see cref="GatedBurstRule"/>): remembers the gated measurements of the
/// listed sensors within the window, opens one alert when <see cref="GatedBurstRule.MinCount"/> of them fall within
/// <see cref="GatedBurstRule.WindowS"/> of one another and counts each further one while it is open; each measurement
/// counts once.
/// </summary>
internal sealed class GatedBurstAlert() : VehicleAlertRule(AlertKinds.GatedBurst)
{
    private readonly List<(long TimeUs, AlertEventKey Key, SensorKind Sensor, double Nis, double Gate)> _recentGated = [];
    private readonly HashSet<AlertEventKey> _counted = [];

    /// <inheritdoc/>
    public override bool IsEnabled(AlertRuleSettings settings) => settings.GatedBurst.Enabled;

    /// <inheritdoc/>
    public override double ClearS(AlertRuleSettings settings) => settings.GatedBurst.ClearS;

    /// <inheritdoc/>
    public override void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings)
    {
        var rule = settings.GatedBurst;
        if (!rule.Enabled || outcome.Kind != OutcomeKind.Gated || !RuleChecks.Includes(rule.Sensors, m.Kind))
        {
            return;
        }

        var key = AlertEventKey.Of(m);
        if (_counted.Contains(key))
        {
            return;
        }

        long windowUs = (long)(rule.WindowS * 1e6);
        _recentGated.RemoveAll(g => g.TimeUs < clock.NowUs - windowUs && !_counted.Contains(g.Key));
        _recentGated.Add((key.TimeUs, key, m.Kind, outcome.Nis, outcome.GateThreshold));
        var e = Episode;
        if (!e.Open)
        {
            var inWindow = _recentGated.Where(g => g.TimeUs >= key.TimeUs - windowUs && g.TimeUs <= key.TimeUs + windowUs).ToList();
            if (inWindow.Count < rule.MinCount)
            {
                return;
            }

            foreach (var g in inWindow)
            {
                _counted.Add(g.Key);
            }

            e.Raise(inWindow.Min(g => g.TimeUs), inWindow.Max(g => g.TimeUs));
            e.Count = inWindow.Count;
        }
        else
        {
            _counted.Add(key);
            e.Raise(key.TimeUs, key.TimeUs);
            e.Count++;
        }

        var members = _recentGated.Where(g => _counted.Contains(g.Key)).ToList();
        var bySensor = new JsonObject();
        foreach (var group in members.GroupBy(g => g.Sensor).OrderBy(g => g.Key))
        {
            bySensor[AlertKinds.SensorName(group.Key)] = group.Count();
        }

        double spanS = (e.LastUs - e.StartUs) / 1e6;
        bool allFixes = members.All(g => g.Sensor == SensorKind.GnssPosition);
        e.Summary = allFixes
            ? Inv($"{e.Count} GNSS fixes gated in {spanS:0} s")
            : Inv($"{e.Count} measurements gated in {spanS:0} s ({string.Join(", ", bySensor.Select(p => p.Key + " " + p.Value!.ToJsonString()))})");
        e.Details = new JsonObject
        {
            ["count"] = e.Count,
            ["span_s"] = spanS,
            ["by_sensor"] = bySensor,
            ["max_nis"] = Num(members.Max(g => g.Nis)),
            ["gate_threshold"] = Num(outcome.GateThreshold),
            ["window_s"] = rule.WindowS,
            ["min_count"] = rule.MinCount,
        };
    }

    /// <inheritdoc/>
    protected override void ForgetEpisode()
    {
        _recentGated.RemoveAll(g => _counted.Contains(g.Key));
        _counted.Clear();
    }
}
