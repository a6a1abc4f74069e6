// The inconsistent_sensor rule with its state.
using System.Text.Json.Nodes;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using static FusionService.Alerts.Rules.AlertText;

namespace FusionService.Alerts.Rules;

/// <summary>
/// <c>inconsistent_sensor</c> (thresholds, definition and sources: <see cref="InconsistentSensorRule"/>): per sensor a
/// window of NIS values tested against its chi-square band (<see cref="NisConsistencyTest"/>) and, for the sensors
/// listed, a <see cref="WhitenessWindow"/>; the alert stays open while any sensor is still flagged.
/// </summary>
internal sealed class InconsistentSensorAlert() : VehicleAlertRule(AlertKinds.InconsistentSensor)
{
    private const int SensorCount = 4;
    private readonly NisWindow[] _nis = [new(), new(), new(), new()];
    private readonly WhitenessWindow?[] _whiteness = new WhitenessWindow?[SensorCount];
    private readonly Dictionary<(int Count, int Dof, double Probability), (double Lower, double Upper)> _intervals = [];

    /// <inheritdoc/>
    public override bool IsEnabled(AlertRuleSettings settings) => settings.InconsistentSensor.Enabled;

    /// <inheritdoc/>
    public override double ClearS(AlertRuleSettings settings) => settings.InconsistentSensor.ClearS;

    /// <inheritdoc/>
    public override void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay, AlertClock clock, AlertRuleSettings settings)
    {
        var rule = settings.InconsistentSensor;
        if (!rule.Enabled || isReplay || outcome.Kind != OutcomeKind.Accepted || outcome.Recovered
            || outcome.Dimension <= 0 || !double.IsFinite(outcome.Nis) || (int)m.Kind >= SensorCount || !RuleChecks.Includes(rule.Sensors, m.Kind))
        {
            return;
        }

        ObserveNis(m.Kind, m.TimeUs, outcome, rule);
    }

    /// <inheritdoc/>
    protected override bool StaysOpen(AlertRuleSettings settings) =>
        Enumerable.Range(0, SensorCount).Any(k => Flagged(k, settings.InconsistentSensor));

    private void ObserveNis(SensorKind sensor, long t, in MeasurementOutcome outcome, InconsistentSensorRule rule)
    {
        var w = _nis[(int)sensor];
        var white = Whiteness(sensor, rule);
        white?.Add(outcome);
        w.Sum += outcome.Nis;
        w.Dof += outcome.Dimension;
        w.Count++;
        if (w.Count < rule.WindowSamples)
        {
            return;
        }

        double mean = w.Sum / w.Count;
        var cacheKey = (w.Count, w.Dof, rule.Probability);
        if (!_intervals.TryGetValue(cacheKey, out var band))
        {
            band = NisConsistencyTest.Interval(w.Count, w.Dof, rule.Probability);
            _intervals[cacheKey] = band;
        }

        bool outside = (rule.FlagTooPessimistic && mean < band.Lower) || mean > band.Upper;
        w.ConsecutiveOut = outside ? w.ConsecutiveOut + 1 : 0;
        white?.Close(Math.Min(InnovationWhitenessTest.DefaultMinimumSamples, rule.WindowSamples));
        w.LastMean = mean;
        w.LastBand = band;
        w.LastCount = w.Count;
        w.LastDof = w.Dof;
        w.Sum = 0;
        w.Dof = 0;
        w.Count = 0;
        if (!Flagged((int)sensor, rule))
        {
            return;
        }

        var e = Episode;
        bool opening = !e.Open;
        e.Raise(t, t);
        e.Count = opening ? 1 : e.Count + 1;
        var sensors = new JsonArray();
        var names = new List<string>();
        var sentences = new List<string>();
        for (int k = 0; k < SensorCount; k++)
        {
            var x = _nis[k];
            bool nisOut = x.ConsecutiveOut >= rule.ConsecutiveWindows;
            var wx = _whiteness[k];
            bool correlated = wx is not null && wx.ConsecutiveCorrelated >= rule.ConsecutiveWindows;
            if (!nisOut && !correlated)
            {
                continue;
            }

            string name = AlertKinds.SensorName((SensorKind)k);
            var entry = new JsonObject
            {
                ["sensor"] = name,
                ["mean_nis"] = x.LastMean,
                ["samples"] = x.LastCount,
                ["nis_dof"] = x.LastDof,
                ["nis_interval"] = new JsonObject { ["lower"] = x.LastBand.Lower, ["upper"] = x.LastBand.Upper },
                ["probability"] = rule.Probability,
                ["verdict"] = nisOut ? (x.LastMean > x.LastBand.Upper ? "too_optimistic" : "too_pessimistic") : "correlated",
                ["windows_out_of_band"] = x.ConsecutiveOut,
            };
            if (wx?.Last is { } r)
            {
                entry["whiteness"] = new JsonObject
                {
                    ["verdict"] = correlated ? "correlated" : "white",
                    ["lag1"] = Num(r.Lag1),
                    ["band"] = Num(r.BandHalfWidth),
                    ["ljung_box_q"] = Num(r.LjungBoxQ),
                    ["critical_value"] = r.CriticalValue,
                    ["dof"] = r.Dof,
                    ["windows_correlated"] = wx.ConsecutiveCorrelated,
                };
            }

            sensors.Add(entry);
            if (nisOut)
            {
                names.Add(name);
            }

            if (correlated && wx!.Last is { } c)
            {
                sentences.Add(Inv($"{PlainErrors((SensorKind)k)} keep pulling the same way: successive measurements disagree with the track in a correlated way (lag-1 autocorrelation {c.Lag1:0.00}, expected within ±{c.BandHalfWidth:0.00}) for {rule.ConsecutiveWindows} windows of {rule.WindowSamples} samples, so the stated uncertainty is too small"));
            }
        }

        if (names.Count > 0)
        {
            sentences.Insert(0, Inv($"Mean NIS of {string.Join(", ", names)} outside its {rule.Probability * 100:0.#} % chi-square band for {rule.ConsecutiveWindows} windows of {rule.WindowSamples} samples"));
        }

        e.Summary = string.Join("; ", sentences);
        e.Details = new JsonObject { ["sensors"] = sensors, ["windows"] = e.Count };
    }

    private static string PlainErrors(SensorKind sensor) => sensor switch
    {
        SensorKind.GnssPosition => "GNSS position errors",
        SensorKind.GnssVelocity => "GNSS speed and course errors",
        SensorKind.WheelSpeed => "Wheel-speed errors",
        _ => "IMU errors",
    };

    /// <summary>The sensor's whiteness window when the rule tests it, made on first use and remade when the lags change.</summary>
    private WhitenessWindow? Whiteness(SensorKind sensor, InconsistentSensorRule rule)
    {
        int k = (int)sensor;
        if (!RuleChecks.Includes(rule.WhitenessSensors, sensor))
        {
            _whiteness[k] = null;
            return null;
        }

        if (_whiteness[k] is not { } window || window.Lags != rule.WhitenessLags)
        {
            window = new WhitenessWindow(rule.WhitenessLags);
            _whiteness[k] = window;
        }

        return window;
    }

    private bool Flagged(int k, InconsistentSensorRule rule) =>
        _nis[k].ConsecutiveOut >= rule.ConsecutiveWindows
        || (_whiteness[k] is { } w && RuleChecks.Includes(rule.WhitenessSensors, (SensorKind)k) && w.ConsecutiveCorrelated >= rule.ConsecutiveWindows);

    private sealed class NisWindow
    {
        public double Sum { get; set; }

        public int Dof { get; set; }

        public int Count { get; set; }

        public int ConsecutiveOut { get; set; }

        public double LastMean { get; set; }

        public (double Lower, double Upper) LastBand { get; set; }

        public int LastCount { get; set; }

        public int LastDof { get; set; }
    }
}
