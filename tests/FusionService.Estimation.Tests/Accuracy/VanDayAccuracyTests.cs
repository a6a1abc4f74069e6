using FusionService.Estimation.Geodesy;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Accuracy;

/// <summary>
/// A whole invented working day of one van: consecutive delivery rounds from the depot, about 8 hours, 1 Hz GNSS
/// (3 m, 1 % jumps), 10 Hz wheel (3 % scale error) and IMU (0.5 deg/s bias). The filter runs over the day once; the
/// RTS smoother runs hour by hour from the filter's checkpoint at each hour, as a service would smooth a long window.
/// </summary>
public sealed class VanDayAccuracyTests(ITestOutputHelper output)
{
    [Fact]
    public void Filtered_and_smoothed_day_beats_raw_gnss()
    {
        var network = new DeliveryNetwork();
        var suite = SensorSuite.ForProfile(NoiseProfile.DeliveryVan) with { OutlierProbability = 0.01 };
        var rounds = new List<ScenarioRun>();
        long startUs = RouteDriverOptions.DefaultStartTimeUs;
        long dayEndUs = startUs + (8L * 3600 * 1_000_000);
        for (int round = 0; startUs < dayEndUs; round++)
        {
            TruthTrajectory truth = network.PlanRound(vanIndex: 2, stopCount: 12, seed: 700 + round)
                .Drive(new RouteDriverOptions { StartTimeUs = startUs });
            rounds.Add(MeasurementGenerator.Generate(truth, suite, seed: 800 + round));
            startUs = truth.EndTimeUs + 600_000_000;
        }

        var all = rounds.SelectMany(r => r.Measurements).ToList();
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        TrackState state = TrackState.Empty;
        long firstUs = all[0].TimeUs;
        var hourStarts = new List<(long TimeUs, TrackState State, int Index)>();
        double rawSq = 0, filteredSq = 0, smoothedSq = 0;
        int filteredN = 0;
        for (int i = 0; i < all.Count; i++)
        {
            Measurement m = all[i];
            if (state.Phase == TrackPhase.Running && (hourStarts.Count == 0 || m.TimeUs - hourStarts[^1].TimeUs >= 3_600_000_000L))
            {
                hourStarts.Add((m.TimeUs, state, i));
            }

            processor.Process(ref state, m);
            if (m.Kind == SensorKind.GnssPosition && state.Phase == TrackPhase.Running)
            {
                ScenarioRun run = RunAt(rounds, m.TimeUs);
                var truth = run.TrueStateAt(m.TimeUs);
                run.Truth.ToLocalM(m.Value0, m.Value1, out double fe, out double fn);
                rawSq += TruthError.Sq(fe - truth[EastM]) + TruthError.Sq(fn - truth[NorthM]);
                filteredSq += TruthError.HorizontalSq(run, state.Plane, state.X[EastM], state.X[NorthM], truth);
                filteredN++;
            }
        }

        var fixTimes = all.Where(m => m.Kind == SensorKind.GnssPosition).Select(m => m.TimeUs).ToHashSet();
        int smoothedN = 0;
        for (int h = 0; h < hourStarts.Count; h++)
        {
            int from = hourStarts[h].Index, to = h + 1 < hourStarts.Count ? hourStarts[h + 1].Index : all.Count;
            ReplayResult replay = TrackReplay.Run(processor, hourStarts[h].State, all.Skip(from).Take(to - from));
            foreach (SmoothedSegment s in replay.Smoothed)
            {
                for (int k = 0; k < s.Count; k++)
                {
                    if ((k > 0 && s.TimesUs[k - 1] == s.TimesUs[k]) || !fixTimes.Contains(s.TimesUs[k]))
                    {
                        continue;
                    }

                    ScenarioRun run = RunAt(rounds, s.TimesUs[k]);
                    smoothedSq += TruthError.HorizontalSq(run, s.Planes[k], s.Means[k][EastM], s.Means[k][NorthM], run.TrueStateAt(s.TimesUs[k]));
                    smoothedN++;
                }
            }
        }

        double raw = Math.Sqrt(rawSq / filteredN), filtered = Math.Sqrt(filteredSq / filteredN), smoothed = Math.Sqrt(smoothedSq / smoothedN);
        double hours = (all[^1].TimeUs - firstUs) / 3.6e9;
        output.WriteLine($"van day: {rounds.Count} rounds over {hours:F1} h, {all.Count:N0} measurements, {filteredN:N0} GNSS epochs; "
            + $"horizontal RMSE raw GNSS {raw:F2} m, filtered {filtered:F2} m, smoothed {smoothed:F2} m ({smoothedN:N0} epochs, {hourStarts.Count} hourly windows)");
        Assert.True(hours >= 8.0, $"the day lasted only {hours} h");
        Assert.True(filtered < raw, $"filtered {filtered} m not below raw {raw} m");
        Assert.True(smoothed < raw, $"smoothed {smoothed} m not below raw {raw} m");
        Assert.True(smoothedN > 0.95 * filteredN, $"only {smoothedN} of {filteredN} epochs smoothed");
    }

    private static ScenarioRun RunAt(List<ScenarioRun> rounds, long timeUs) =>
        rounds.First(r => timeUs >= r.Truth.StartTimeUs && timeUs <= r.Truth.EndTimeUs);
}
