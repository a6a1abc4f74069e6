using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>
/// Issue 12, step 4, on the invented drives of <see cref="RealisticDrives"/>: multipath episodes of 15-60 m over about a
/// third of a round, and a 3 min GNSS outage. The targets are the issue's own (product requirements, not published
/// values): at most 1 % of the fixes outside multipath gated (also in the minute after the outage), smoothed RMSE at most
/// twice that of the same drive without the episodes, and the truth inside the filtered and smoothed 95 % ellipses at
/// least 93 % of the time.
/// </summary>
public sealed class MultipathEpisodeTests(ITestOutputHelper output)
{
    private static readonly TrackProcessor Processor = new(new TrackOptions(), NoiseProfile.DeliveryVan);

    [Fact]
    public void Issue12_after_multipath_episodes_clean_fixes_pass_and_smoothing_stays_within_twice_the_clean_sky_error()
    {
        long clean = 0, cleanGated = 0, filtered = 0, filteredInside = 0, smoothed = 0, smoothedInside = 0;
        int restarts = 0, setAside = 0;
        foreach (int seed in new[] { 1202, 1302, 1402, 1502 })
        {
            RealisticDrive drive = RealisticDrives.Multipath(seed);
            ScenarioRun run = drive.Generate();
            ReplayResult replay = TrackReplay.Run(Processor, TrackState.Empty, run.Measurements);
            ScenarioRun withoutEpisodes = (drive with { Suite = drive.Suite with { GnssRandomMultipath = null } }).Generate();
            ReplayResult cleanReplay = TrackReplay.Run(Processor, TrackState.Empty, withoutEpisodes.Measurements);

            foreach ((Measurement m, MeasurementOutcome o) in replay.Outcomes)
            {
                restarts += o.ErrorRestarted ? 1 : 0;
                setAside += o.MultipathSuspected ? 1 : 0;
                if (m.Kind == SensorKind.GnssPosition && run.GetMeasurementTruth(m.MessageKey) is { IsOutlier: false, InMultipath: false, InUrbanCanyon: false }
                    && o.Kind is OutcomeKind.Accepted or OutcomeKind.Gated or OutcomeKind.TrackReset)
                {
                    clean++;
                    cleanGated += o.Kind == OutcomeKind.Accepted ? 0 : 1;
                }
            }

            Assert.DoesNotContain(replay.Outcomes, o => o.Outcome.Kind == OutcomeKind.TrackReset);
            (double rmse, long n, long inside) = TruthTally.Smoothed(run, replay);
            (double cleanRmse, _, _) = TruthTally.Smoothed(withoutEpisodes, cleanReplay);
            smoothed += n;
            smoothedInside += inside;
            (_, long fn, long fInside) = TruthTally.Filtered(run, replay);
            filtered += fn;
            filteredInside += fInside;
            output.WriteLine($"seed {seed}: smoothed RMSE {rmse:F2} m, same drive without the episodes {cleanRmse:F2} m");
            Assert.True(rmse <= 2.0 * cleanRmse, $"seed {seed}: smoothed RMSE {rmse:F2} m against {cleanRmse:F2} m without the episodes");
        }

        double gatedShare = (double)cleanGated / clean;
        double filteredShare = (double)filteredInside / filtered, smoothedShare = (double)smoothedInside / smoothed;
        output.WriteLine($"clean fixes gated {cleanGated} of {clean} ({100 * gatedShare:F2} %); error states restarted {restarts} times; {setAside} fixes set aside as a suspected episode; inside 95 %: filtered {100 * filteredShare:F1} %, smoothed {100 * smoothedShare:F1} %");
        Assert.True(gatedShare <= 0.01, $"{100 * gatedShare:F2} % of clean fixes gated");
        // Episodes are recognised either at their start (the step, fixes set aside) or at their end (the error states restarted).
        Assert.True(restarts + setAside > 0, "no episode was recognised");
        Assert.True(filteredShare >= 0.93, $"filtered containment {100 * filteredShare:F1} %");
        Assert.True(smoothedShare >= 0.93, $"smoothed containment {100 * smoothedShare:F1} %");
    }

    [Fact]
    public void Issue12_multipath_biases_of_10_to_20_m_are_set_aside_rather_than_absorbed()
    {
        // Biases this small pass the gate or look like the receiver's correlated error once it is restarted; taken in, they
        // pulled the track by metres while its ellipse stayed small (inside 95 %: 84.9 % filtered, 82.7 % smoothed over 64
        // drives before the step test, `./build.sh bench consistency`). The step they make between fixes gives them away.
        long clean = 0, cleanGated = 0, filtered = 0, filteredInside = 0, smoothed = 0, smoothedInside = 0;
        foreach (int seed in new[] { 1202, 1302, 1402, 1502 })
        {
            RealisticDrive drive = RealisticDrives.Multipath(seed);
            drive = drive with { Suite = drive.Suite with { GnssRandomMultipath = RealisticDrives.ThirdOfTheTimeMultipath with { BiasMinM = 10, BiasMaxM = 20 } } };
            ScenarioRun run = drive.Generate();
            ReplayResult replay = TrackReplay.Run(Processor, TrackState.Empty, run.Measurements);
            foreach ((Measurement m, MeasurementOutcome o) in replay.Outcomes)
            {
                if (m.Kind == SensorKind.GnssPosition && run.GetMeasurementTruth(m.MessageKey) is { IsOutlier: false, InMultipath: false, InUrbanCanyon: false }
                    && o.Kind is OutcomeKind.Accepted or OutcomeKind.Gated or OutcomeKind.TrackReset)
                {
                    clean++;
                    cleanGated += o.Kind == OutcomeKind.Accepted ? 0 : 1;
                }
            }

            (_, long n, long inside) = TruthTally.Smoothed(run, replay);
            smoothed += n;
            smoothedInside += inside;
            (_, long fn, long fInside) = TruthTally.Filtered(run, replay);
            filtered += fn;
            filteredInside += fInside;
        }

        double gatedShare = (double)cleanGated / clean;
        double filteredShare = (double)filteredInside / filtered, smoothedShare = (double)smoothedInside / smoothed;
        output.WriteLine($"clean fixes gated {cleanGated} of {clean} ({100 * gatedShare:F2} %); inside 95 %: filtered {100 * filteredShare:F1} %, smoothed {100 * smoothedShare:F1} %");
        Assert.True(gatedShare <= 0.01, $"{100 * gatedShare:F2} % of clean fixes gated");
        Assert.True(filteredShare >= 0.93, $"filtered containment {100 * filteredShare:F1} %");
        Assert.True(smoothedShare >= 0.93, $"smoothed containment {100 * smoothedShare:F1} %");
    }

    [Fact]
    public void Issue12_in_the_minute_after_a_3_min_outage_at_most_1_percent_of_clean_fixes_are_gated()
    {
        long clean = 0, gated = 0;
        foreach (int seed in new[] { 1203, 1303, 1403, 1503 })
        {
            RealisticDrive drive = RealisticDrives.Outage(seed);
            ScenarioRun run = drive.Generate();
            long endUs = drive.Suite.GnssOutages[0].EndTimeUs;
            ReplayResult replay = TrackReplay.Run(Processor, TrackState.Empty, run.Measurements);
            foreach ((Measurement m, MeasurementOutcome o) in replay.Outcomes)
            {
                if (m.Kind == SensorKind.GnssPosition && m.TimeUs >= endUs && m.TimeUs < endUs + 60_000_000
                    && run.GetMeasurementTruth(m.MessageKey) is { IsOutlier: false, InMultipath: false, InUrbanCanyon: false })
                {
                    clean++;
                    gated += o.Kind == OutcomeKind.Accepted ? 0 : 1;
                }
            }
        }

        output.WriteLine($"{gated} of {clean} clean fixes gated in the minute after the outage");
        Assert.True(clean >= 200, $"only {clean} fixes after the outages");
        Assert.True(gated <= 0.01 * clean, $"{gated} of {clean} gated");
    }

    [Fact]
    public void Issue12_a_track_that_started_inside_a_multipath_episode_comes_back_to_the_fixes_without_a_reset()
    {
        // Seed 1802 starts the round inside a 23 m episode: the track is anchored 25 m off and the clean fixes after the
        // episode disagree with it by less than a relocation (75 m). After 60 s moving (120 s standing) of fixes gated in
        // a row the position is taken from them again.
        RealisticDrive drive = RealisticDrives.Multipath(1802);
        ScenarioRun run = drive.Generate();
        ReplayResult replay = TrackReplay.Run(Processor, TrackState.Empty, run.Measurements);
        Measurement first = replay.Outcomes.First(o => o.Measurement.Kind == SensorKind.GnssPosition && o.Outcome.Kind == OutcomeKind.Accepted).Measurement;
        Assert.True(run.GetMeasurementTruth(first.MessageKey).InMultipath, "the scenario no longer starts inside an episode");
        var recovered = replay.Outcomes.Where(o => o.Measurement.Kind == SensorKind.GnssPosition && o.Outcome.Recovered).ToList();
        Assert.NotEmpty(recovered);
        Assert.DoesNotContain(replay.Outcomes, o => o.Outcome.Kind == OutcomeKind.TrackReset);
        long backUs = recovered[0].Measurement.TimeUs;
        output.WriteLine($"position taken from the fixes again {(backUs - first.TimeUs) / 1e6:F0} s after the start, shifted {recovered[0].Outcome.PositionShiftM:F1} m");
        Assert.InRange(recovered[0].Outcome.PositionShiftM, 15.0, 40.0);

        ForwardStep after = replay.Forward.SelectMany(s => s).First(s => s.TimeUs >= backUs + 5_000_000 && run.Truth.Covers(s.TimeUs));
        (double de, double dn) = run.Truth.OffsetOf(after.TimeUs, after.Plane, after.Filtered[EastM], after.Filtered[NorthM]);
        output.WriteLine($"filtered error 5 s later {Math.Sqrt((de * de) + (dn * dn)):F1} m");
        Assert.True(Math.Sqrt((de * de) + (dn * dn)) < 8.0, $"still {Math.Sqrt((de * de) + (dn * dn)):F1} m off");
    }

    [Fact]
    public void Issue12_an_episode_that_begins_at_a_stop_and_goes_on_after_it_does_not_pull_the_track_onto_its_fixes()
    {
        // Seed 4502: an episode's fixes are gated for 36 s at a stop and 25 s after the van drives off. Timed from the stop,
        // the 60 s a moving track waits before it takes its position from the fixes again had run out, and the track moved
        // onto the biased fixes, 37 m off, for 250 s (found by the 64-seed consistency report). Timed from driving off,
        // the episode ends first.
        RealisticDrive drive = RealisticDrives.Multipath(4502);
        ScenarioRun run = drive.Generate();
        ReplayResult replay = TrackReplay.Run(Processor, TrackState.Empty, run.Measurements);
        Assert.DoesNotContain(replay.Outcomes, o => o.Measurement.Kind == SensorKind.GnssPosition && o.Outcome.Recovered && run.GetMeasurementTruth(o.Measurement.MessageKey).InMultipath);
        double worstM = replay.Forward.SelectMany(s => s).Where(s => run.Truth.Covers(s.TimeUs)).Max(s =>
        {
            (double de, double dn) = run.Truth.OffsetOf(s.TimeUs, s.Plane, s.Filtered[EastM], s.Filtered[NorthM]);
            return Math.Sqrt((de * de) + (dn * dn));
        });
        output.WriteLine($"largest filtered error {worstM:F1} m");
        Assert.True(worstM < 15.0, $"the filtered position was {worstM:F1} m off (an episode's bias is 15-60 m)");
    }
}
