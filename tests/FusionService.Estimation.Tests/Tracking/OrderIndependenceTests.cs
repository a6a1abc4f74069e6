using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using Xunit.Abstractions;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>
/// Property: the same measurements, arriving in any order with delays inside the lag window and with duplicates, leave
/// a bitwise-identical final state and identical per-measurement outcomes (canonical order, exact checkpoint replay;
/// Bar-Shalom 2002 names re-processing as the exact reference for out-of-sequence measurements).
/// </summary>
public sealed class OrderIndependenceTests(ITestOutputHelper output)
{
    // Delays up to 45 s replay from the checkpoints five seconds apart; up to 0.5 s (a gateway's concurrent batches) from
    // the three newest, a second apart, which are thinned as they age.
    public static TheoryData<int, double> Seeds => new()
    {
        { 1, 45.0 }, { 2, 45.0 }, { 3, 45.0 }, { 4, 45.0 }, { 5, 45.0 }, { 6, 45.0 }, { 7, 45.0 }, { 8, 45.0 },
        { 9, 0.5 }, { 10, 0.5 }, { 11, 0.5 }, { 12, 0.5 },
    };

    [Theory]
    [MemberData(nameof(Seeds))]
    public void Shuffled_delayed_and_duplicated_arrivals_give_bitwise_identical_results(int seed, double maxDelayS)
    {
        var drive = SimpleDrive.Create(seed: 100 + seed, durationS: 240, gyroBiasRps: 0.004, wheelScale: 1.02, stopFromS: 200);
        var options = new TrackOptions { LagWindowS = 60 };
        var processor = new TrackProcessor(options, NoiseProfile.DeliveryVan);

        var inOrder = new VehicleTrack(processor);
        var inOrderLog = new OutcomeLog();
        foreach (Measurement m in drive.Measurements)
        {
            inOrder.Process(m, inOrderLog);
        }

        var random = new Random(seed);
        var arrivals = drive.Measurements
            .Select(m => (ArrivalUs: m.TimeUs + (long)(random.NextDouble() * maxDelayS * 1e6), m))
            .Concat(drive.Measurements.Where(_ => random.NextDouble() < 0.05).Select(m => (ArrivalUs: m.TimeUs + (long)(random.NextDouble() * maxDelayS * 1e6), m)))
            .OrderBy(a => a.ArrivalUs)
            .ThenBy(_ => random.Next())
            .ToList();
        var shuffled = new VehicleTrack(processor);
        var shuffledLog = new OutcomeLog();
        int duplicates = 0;
        foreach (var (_, m) in arrivals)
        {
            if (shuffled.Process(m, shuffledLog).Kind == OutcomeKind.Duplicate)
            {
                duplicates++;
            }
        }

        output.WriteLine($"{arrivals.Count} arrivals, {duplicates} duplicates, {shuffledLog.Replays} re-processed outcomes");
        Assert.Equal(arrivals.Count - drive.Measurements.Count, duplicates);
        Assert.True(shuffledLog.Replays > 0, "the arrival order must actually exercise late-data replay");
        AssertBitwiseEqual(inOrder.Current, shuffled.Current);
        Assert.Equal(inOrderLog.Final.Count, shuffledLog.Final.Count);
        foreach (var (key, outcome) in inOrderLog.Final)
        {
            Assert.Equal(outcome, shuffledLog.Final[key]);
        }

        // The after-the-fact replay (no window) processes the same canonical sequence.
        ReplayResult replay = TrackReplay.Run(processor, TrackState.Empty, drive.Measurements.AsEnumerable().Reverse());
        AssertBitwiseEqual(inOrder.Current, replay.Final);
    }

    [Fact]
    public void Measurement_older_than_the_window_is_too_late_and_changes_nothing()
    {
        var drive = SimpleDrive.Create(seed: 5, durationS: 150);
        var track = new VehicleTrack(new TrackOptions { LagWindowS = 30 }, NoiseProfile.DeliveryVan);
        Measurement old = drive.Measurements.First(m => m.TimeUs > SimpleDrive.StartUs + 50_000_000 && m.Kind == SensorKind.GnssPosition);
        foreach (Measurement m in drive.Measurements.Where(m => !m.Equals(old)))
        {
            track.Process(m);
        }

        TrackState before = track.Current;
        Assert.Equal(OutcomeKind.TooLate, track.Process(old).Kind);
        AssertBitwiseEqual(before, track.Current);
    }

    [Fact]
    public void A_late_measurement_reports_again_only_itself_and_what_follows_it()
    {
        // Checkpoints every 5 s; the late measurement lies 3 s after one, so the re-processing starts 3 s before it.
        var drive = SimpleDrive.Create(seed: 11, durationS: 60);
        var track = new VehicleTrack(new TrackOptions { LagWindowS = 60, CheckpointIntervalS = 5 }, NoiseProfile.DeliveryVan);
        Measurement late = drive.Measurements.First(m => m.TimeUs >= SimpleDrive.StartUs + 33_000_000);
        var held = drive.Measurements.Where(m => !m.Equals(late)).ToList();
        foreach (Measurement m in held.Where(m => m.TimeUs <= late.TimeUs + 400_000))
        {
            track.Process(m);
        }

        var log = new ReportLog();
        track.Process(late, log);

        // Itself once (not a replay), then every held measurement after it once (replays), in canonical order; none before it.
        var after = held.Where(m => m.TimeUs <= late.TimeUs + 400_000 && VehicleTrack.CompareKey(m, late) > 0).ToList();
        Assert.NotEmpty(after);
        Assert.Equal([(late, false), .. after.Select(m => (m, true))], log.Reports);
    }

    [Fact]
    public void Same_key_with_different_values_is_a_conflict()
    {
        var track = new VehicleTrack(new TrackOptions(), NoiseProfile.DeliveryVan);
        var a = Measurement.GnssPosition(SimpleDrive.StartUs, 42, 47.0, 8.0, 3.0);
        var b = Measurement.GnssPosition(SimpleDrive.StartUs, 42, 47.0001, 8.0, 3.0);
        Assert.Equal(OutcomeKind.Initialising, track.Process(a).Kind);
        Assert.Equal(OutcomeKind.Duplicate, track.Process(a).Kind);
        Assert.Equal(OutcomeKind.Conflict, track.Process(b).Kind);
    }

    [Fact]
    public void Memory_is_bounded_by_the_window()
    {
        var drive = SimpleDrive.Create(seed: 9, durationS: 600);
        var options = new TrackOptions { LagWindowS = 60, CheckpointIntervalS = 5 };
        var track = new VehicleTrack(options, NoiseProfile.DeliveryVan);
        int maxHeld = 0;
        foreach (Measurement m in drive.Measurements)
        {
            track.Process(m);
            maxHeld = Math.Max(maxHeld, track.HeldMeasurements);
        }

        // 21 measurements per second in this drive; the window, one checkpoint interval and the inclusive end second bound
        // what is held. Checkpoints: the base, one per 5 s of the window and the three newest, a second apart.
        output.WriteLine($"held at most {maxHeld} measurements, {track.HeldCheckpoints} checkpoints, about {track.ApproximateBytes} bytes");
        Assert.True(maxHeld <= 21 * (60 + 5 + 1), $"held {maxHeld}");
        Assert.InRange(track.HeldCheckpoints, (60 / 5) + 3 - 1, (60 / 5) + 2 + 3);
        Assert.True(track.HeldCheckpoints <= VehicleTrack.MaxCheckpoints(options), $"held {track.HeldCheckpoints} checkpoints");
    }

    internal static void AssertBitwiseEqual(in TrackState expected, in TrackState actual)
    {
        for (int i = 0; i < StateVector.Length; i++)
        {
            Assert.Equal(BitConverter.DoubleToInt64Bits(expected.X[i]), BitConverter.DoubleToInt64Bits(actual.X[i]));
        }

        for (int i = 0; i < StateMatrix.Length; i++)
        {
            Assert.Equal(BitConverter.DoubleToInt64Bits(expected.P[i]), BitConverter.DoubleToInt64Bits(actual.P[i]));
        }

        Assert.Equal(expected.TimeUs, actual.TimeUs);
        Assert.Equal(expected.Phase, actual.Phase);
        Assert.Equal(expected.Resets, actual.Resets);

        // Everything else a checkpoint carries (held fix and course, carry and stream-agreement evidence) byte for byte.
        Assert.Equal(TrackStateCodec.Encode(expected, default), TrackStateCodec.Encode(actual, default));
    }

    private sealed class ReportLog : ITrackObserver
    {
        public List<(Measurement M, bool IsReplay)> Reports { get; } = [];

        public void OnOutcome(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay) =>
            Reports.Add((m, isReplay));
    }
}
