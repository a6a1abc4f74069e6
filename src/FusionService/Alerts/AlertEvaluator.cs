// Pure per-vehicle alert rules over the track's outcomes (no I/O).
using System.Globalization;
using System.Text.Json.Nodes;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Time;
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
/// re-processes its stored data after a restart therefore produces no duplicate alerts. No I/O; not thread-safe (one
/// track grain at a time).
/// </summary>
public sealed class AlertEvaluator
{
    private const int SensorCount = 4;
    private readonly Dictionary<string, Episode> _episodes = new(StringComparer.Ordinal);
    private readonly List<AlertObservation> _pending = [];
    private readonly List<(long TimeUs, EventKey Key, SensorKind Sensor, double Nis, double Gate)> _recentGated = [];
    private readonly HashSet<EventKey> _counted = [];
    private readonly HashSet<EventKey> _resets = [];
    private readonly HashSet<EventKey> _unusable = [];
    private readonly NisWindow[] _nis = [new(), new(), new(), new()];
    private readonly WhitenessWindow?[] _whiteness = new WhitenessWindow?[4];
    private readonly Dictionary<(int Count, int Dof, double Probability), (double Lower, double Upper)> _intervals = [];
    private long _nowUs = long.MinValue;
    private long _lastGnssUs = long.MinValue;
    private long _wheelOutsideSinceUs = long.MinValue;

    /// <summary>Creates an evaluator with <paramref name="settings"/>.</summary>
    public AlertEvaluator(AlertRuleSettings settings)
    {
        ArgumentNullException.ThrowIfNull(settings);
        Settings = settings;
        foreach (var kind in AlertKinds.All)
        {
            _episodes[kind] = new Episode();
        }
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

        long t = m.TimeUs;
        _nowUs = Math.Max(_nowUs, t);
        if (m.Kind == SensorKind.GnssPosition)
        {
            _lastGnssUs = Math.Max(_lastGnssUs, t);
        }

        var key = new EventKey(t, m.Kind, m.MessageKey);
        var s = Settings;
        if (s.GatedBurst.Enabled && outcome.Kind == OutcomeKind.Gated && RuleChecks.Includes(s.GatedBurst.Sensors, m.Kind))
        {
            ObserveGated(key, m.Kind, outcome, s.GatedBurst);
        }

        if (s.TrackReset.Enabled && outcome.Kind == OutcomeKind.TrackReset && _resets.Add(key))
        {
            var e = _episodes[AlertKinds.TrackReset];
            Raise(e, t, t);
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
                ["clear_s"] = s.TrackReset.ClearS,
            };
        }

        if (outcome.Kind == OutcomeKind.Unusable && _unusable.Add(key))
        {
            var e = _episodes[AlertKinds.MeasurementUnusable];
            Raise(e, t, t);
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

        if (s.InconsistentSensor.Enabled && !isReplay && outcome.Kind == OutcomeKind.Accepted && !outcome.Recovered
            && outcome.Dimension > 0 && double.IsFinite(outcome.Nis) && (int)m.Kind < SensorCount && RuleChecks.Includes(s.InconsistentSensor.Sensors, m.Kind))
        {
            ObserveNis(m.Kind, t, outcome, s.InconsistentSensor);
        }

        if (s.MovedWithoutDriving.Enabled && outcome.Carried)
        {
            ObserveCarried(m, posterior);
        }

        if (s.SensorIsolated.Enabled && (posterior.Agreement.GyroIsolated || posterior.Agreement.CourseIsolated))
        {
            ObserveIsolated(m, posterior.Agreement);
        }

        if (posterior.HasPlane && posterior.Phase == TrackPhase.Running)
        {
            double speedMps = posterior.X[StateIndex.SpeedMps];
            if (s.GnssSilentWhileMoving.Enabled && _lastGnssUs != long.MinValue)
            {
                double gapS = (_nowUs - _lastGnssUs) / 1e6;
                if (gapS > s.GnssSilentWhileMoving.SilentS && Math.Abs(speedMps) > s.GnssSilentWhileMoving.MinSpeedMps)
                {
                    var e = _episodes[AlertKinds.GnssSilentWhileMoving];
                    double maxGap = Math.Max(gapS, e.Details?["silent_s"]?.GetValue<double>() ?? 0);
                    if (!e.Open || e.StartUs != _lastGnssUs || gapS >= maxGap)
                    {
                        Raise(e, _lastGnssUs, _nowUs);
                        e.Count = 1;
                        e.Summary = Inv($"No GNSS position for {maxGap:0} s while moving at {Math.Abs(speedMps):0.0} m/s");
                        e.Details = new JsonObject
                        {
                            ["silent_s"] = maxGap,
                            ["speed_mps"] = Math.Abs(speedMps),
                            ["last_fix_at"] = Time(_lastGnssUs),
                            ["threshold_s"] = s.GnssSilentWhileMoving.SilentS,
                            ["min_speed_mps"] = s.GnssSilentWhileMoving.MinSpeedMps,
                        };
                    }
                }
            }

            if (s.WheelScaleOutOfBand.Enabled)
            {
                ObserveWheelScale(posterior, s.WheelScaleOutOfBand);
            }
        }

        ResolveCleared(s);
    }

    /// <summary>The observations since the last call, oldest first (a resolve precedes a new episode of the same kind).</summary>
    public IReadOnlyList<AlertObservation> TakeChanges()
    {
        foreach (var (kind, e) in _episodes)
        {
            if (e.Open && e.Dirty)
            {
                _pending.Add(ToObservation(kind, e, resolve: false));
                e.Dirty = false;
            }
        }

        var changes = _pending.ToArray();
        _pending.Clear();
        return changes;
    }

    private static string Inv(FormattableString text) => text.ToString(CultureInfo.InvariantCulture);

    private static DateTimeOffset ToTime(long timeUs) => UnixMicroseconds.ToDateTimeOffset(timeUs);

    private static string Time(long timeUs) => ToTime(timeUs).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", CultureInfo.InvariantCulture);

    private static JsonNode? Num(double value) => double.IsFinite(value) ? JsonValue.Create(value) : null;

    private static void Raise(Episode e, long startUs, long seenUs)
    {
        if (!e.Open)
        {
            e.Open = true;
            e.StartUs = startUs;
            e.Count = 0;
        }

        e.StartUs = Math.Min(e.StartUs, startUs);
        e.LastUs = Math.Max(e.LastUs, seenUs);
        e.Dirty = true;
    }

    private static AlertObservation ToObservation(string kind, Episode e, bool resolve) => new(
        kind,
        AlertKinds.SeverityOf(kind),
        ToTime(e.StartUs),
        ToTime(Math.Max(e.StartUs, e.LastUs)),
        Math.Max(1, e.Count),
        e.Summary,
        (e.Details ?? []).ToJsonString(),
        resolve);

    private void ObserveGated(EventKey key, SensorKind sensor, in MeasurementOutcome outcome, GatedBurstRule rule)
    {
        if (_counted.Contains(key))
        {
            return;
        }

        long windowUs = (long)(rule.WindowS * 1e6);
        _recentGated.RemoveAll(g => g.TimeUs < _nowUs - windowUs && !_counted.Contains(g.Key));
        _recentGated.Add((key.TimeUs, key, sensor, outcome.Nis, outcome.GateThreshold));
        var e = _episodes[AlertKinds.GatedBurst];
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

            Raise(e, inWindow.Min(g => g.TimeUs), inWindow.Max(g => g.TimeUs));
            e.Count = inWindow.Count;
        }
        else
        {
            _counted.Add(key);
            Raise(e, key.TimeUs, key.TimeUs);
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

        var e = _episodes[AlertKinds.InconsistentSensor];
        bool opening = !e.Open;
        Raise(e, t, t);
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

    private void ObserveWheelScale(in TrackState posterior, WheelScaleRule rule)
    {
        double scale = posterior.X[StateIndex.WheelScale];
        double variance = posterior.P[(StateIndex.WheelScale * StateIndex.Count) + StateIndex.WheelScale];
        double sd = Math.Sqrt(Math.Max(0, variance));
        bool outside = double.IsFinite(scale) && double.IsFinite(sd) && sd <= rule.MaxSd
            && (scale - (rule.ConfidenceZ * sd) > rule.Upper || scale + (rule.ConfidenceZ * sd) < rule.Lower);
        if (!outside)
        {
            _wheelOutsideSinceUs = long.MinValue;
            return;
        }

        if (_wheelOutsideSinceUs == long.MinValue)
        {
            _wheelOutsideSinceUs = _nowUs;
        }

        if (_nowUs - _wheelOutsideSinceUs < (long)(rule.HoldS * 1e6) && !_episodes[AlertKinds.WheelScaleOutOfBand].Open)
        {
            return;
        }

        var e = _episodes[AlertKinds.WheelScaleOutOfBand];
        bool opening = !e.Open, wasDirty = e.Dirty;
        Raise(e, _nowUs, _nowUs);
        e.Count = 1;
        if (opening || _nowUs - e.DetailsUs >= 60_000_000)
        {
            // The estimate moves a little with every update: refresh the numbers once a minute of data, not every sample.
            e.DetailsUs = _nowUs;
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

    private void ResolveCleared(AlertRuleSettings s)
    {
        Clear(AlertKinds.GatedBurst, s.GatedBurst.ClearS, !s.GatedBurst.Enabled);
        Clear(AlertKinds.TrackReset, s.TrackReset.ClearS, !s.TrackReset.Enabled);
        Clear(AlertKinds.InconsistentSensor, s.InconsistentSensor.ClearS, !s.InconsistentSensor.Enabled);
        Clear(AlertKinds.GnssSilentWhileMoving, s.GnssSilentWhileMoving.ClearS, !s.GnssSilentWhileMoving.Enabled);
        Clear(AlertKinds.WheelScaleOutOfBand, s.WheelScaleOutOfBand.ClearS, !s.WheelScaleOutOfBand.Enabled);
        Clear(AlertKinds.MovedWithoutDriving, s.MovedWithoutDriving.ClearS, !s.MovedWithoutDriving.Enabled);
        Clear(AlertKinds.SensorIsolated, s.SensorIsolated.ClearS, !s.SensorIsolated.Enabled);
        Clear(AlertKinds.MeasurementUnusable, AlertKinds.MeasurementUnusableClearS, false);
    }

    /// <summary>
    /// Opens or extends <c>sensor_isolated</c> while a stream is isolated (<see cref="StreamAgreement"/>). One alert per
    /// vehicle; its details name every isolated stream with its evidence, refreshed when the set changes.
    /// </summary>
    private void ObserveIsolated(in Measurement m, in StreamAgreement agreement)
    {
        var e = _episodes[AlertKinds.SensorIsolated];
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
        Raise(e, sinceUs, m.TimeUs);
        if (!changed)
        {
            // An isolation may last all day: refresh the stored alert once a minute of data, not with every sample.
            if (_nowUs - e.DetailsUs < IsolatedRefreshUs)
            {
                e.Dirty = wasDirty;
            }
            else
            {
                e.DetailsUs = _nowUs;
            }

            return;
        }

        e.DetailsUs = _nowUs;
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

    private const long IsolatedRefreshUs = 60_000_000;

    private static double Degrees(double rad) => rad * 180.0 / Math.PI;

    /// <summary>Opens or extends <c>moved_without_driving</c> while the track takes the vehicle to be carried.</summary>
    private void ObserveCarried(in Measurement m, in TrackState posterior)
    {
        var e = _episodes[AlertKinds.MovedWithoutDriving];
        bool opening = !e.Open || e.StartUs != posterior.CarriedSinceUs;
        Raise(e, posterior.CarriedSinceUs, m.TimeUs);
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

    private void Clear(string kind, double clearS, bool disabled)
    {
        var e = _episodes[kind];
        if (!e.Open || (!disabled && _nowUs - e.LastUs < (long)(clearS * 1e6)))
        {
            return;
        }

        if (kind == AlertKinds.InconsistentSensor && !disabled
            && Enumerable.Range(0, SensorCount).Any(k => Flagged(k, Settings.InconsistentSensor)))
        {
            return;
        }

        _pending.Add(ToObservation(kind, e, resolve: true));
        if (kind == AlertKinds.GatedBurst)
        {
            _recentGated.RemoveAll(g => _counted.Contains(g.Key));
            _counted.Clear();
        }

        if (kind == AlertKinds.TrackReset)
        {
            _resets.Clear();
        }

        if (kind == AlertKinds.MeasurementUnusable)
        {
            _unusable.Clear();
        }

        _episodes[kind] = new Episode();
    }

    private readonly record struct EventKey(long TimeUs, SensorKind Sensor, ulong MessageKey);

    private sealed class Episode
    {
        public bool Open { get; set; }

        public bool Dirty { get; set; }

        public long StartUs { get; set; }

        public long LastUs { get; set; } = long.MinValue;

        public long DetailsUs { get; set; } = long.MinValue;

        public int Count { get; set; }

        public string Summary { get; set; } = string.Empty;

        public JsonObject? Details { get; set; }
    }

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
