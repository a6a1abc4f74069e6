using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>
/// Issue 13: a measurement the filter fails on numerically is judged <see cref="OutcomeKind.Unusable"/> and skipped;
/// the track goes on with exactly the state it would have without it: in order, delivered late (re-processing), and
/// rebuilt after a restart from a stored checkpoint. The poison is a GNSS fix whose standard deviation is infinite, what
/// a stored accuracy of 1e50 m becomes as a single-precision value (the case of issue 13); its innovation covariance
/// S = H P Hᵀ + R cannot be Cholesky-factored (a matrix with an infinite entry is not positive definite).
/// </summary>
public sealed class PoisonMeasurementTests
{
    private const ulong PoisonKey = 999_999;

    [Fact]
    public void Issue13_poison_fix_is_judged_unusable_and_the_track_goes_on()
    {
        var (clean, withPoison, poison) = Streams();
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        var reference = Run(processor, clean, out _);
        var poisoned = Run(processor, withPoison, out var log);

        var outcome = log.Final[(poison.TimeUs, poison.Kind, poison.MessageKey)];
        Assert.Equal(OutcomeKind.Unusable, outcome.Kind);
        Assert.Contains("not positive definite", outcome.Failure, StringComparison.Ordinal);
        Assert.Contains("failed numerically", outcome.Describe(poison.Kind), StringComparison.Ordinal);
        Assert.Equal(TrackPhase.Running, poisoned.Current.Phase);
        OrderIndependenceTests.AssertBitwiseEqual(reference.Current, poisoned.Current);

        // Every other measurement keeps the outcome it has without the poison.
        var referenceLog = new OutcomeLog();
        var again = new VehicleTrack(processor);
        foreach (var m in clean)
        {
            again.Process(m, referenceLog);
        }

        foreach (var (key, expected) in referenceLog.Final)
        {
            Assert.Equal(expected.Kind, log.Final[key].Kind);
        }
    }

    [Fact]
    public void Issue13_poison_fix_delivered_late_is_skipped_when_the_track_re_processes()
    {
        var (clean, withPoison, poison) = Streams();
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        var reference = Run(processor, clean, out _);

        // The poison arrives 5 s of data after its time: the track inserts it and re-processes from a checkpoint.
        var late = withPoison.Where(m => m.MessageKey != PoisonKey || m.Kind != SensorKind.GnssPosition).ToList();
        int at = late.FindIndex(m => m.TimeUs > poison.TimeUs + 5_000_000);
        late.Insert(at, poison);
        var log = new OutcomeLog();
        var track = new VehicleTrack(processor);
        MeasurementOutcome own = default;
        foreach (var m in late)
        {
            var o = track.Process(m, log);
            if (m.Equals(poison))
            {
                own = o;
            }
        }

        Assert.Equal(OutcomeKind.Unusable, own.Kind);
        Assert.True(log.Replays > 0);
        OrderIndependenceTests.AssertBitwiseEqual(reference.Current, track.Current);
    }

    [Fact]
    public void Issue13_restart_from_a_checkpoint_before_the_poison_skips_it_again()
    {
        var (clean, withPoison, poison) = Streams();
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        var reference = Run(processor, clean, out _);

        var beforeCrash = new VehicleTrack(processor);
        foreach (var m in withPoison.Where(m => m.TimeUs <= poison.TimeUs + 20_000_000))
        {
            beforeCrash.Process(m);
        }

        var (state, last) = beforeCrash.BaseCheckpoint;
        Assert.NotNull(last);
        Assert.True(VehicleTrack.CompareKey(last.Value, poison) < 0, "the checkpoint must lie before the poison for the check to mean anything");
        var (restoredState, restoredLast) = TrackStateCodec.Decode(TrackStateCodec.Encode(state, last.Value));
        var rebuilt = new VehicleTrack(processor, restoredState, restoredLast);
        var log = new OutcomeLog();
        foreach (var m in withPoison.Where(m => VehicleTrack.CompareKey(m, restoredLast) > 0))
        {
            rebuilt.Process(m, log);
        }

        Assert.Equal(OutcomeKind.Unusable, log.Final[(poison.TimeUs, poison.Kind, poison.MessageKey)].Kind);
        OrderIndependenceTests.AssertBitwiseEqual(reference.Current, rebuilt.Current);
    }

    private static (List<Measurement> Clean, List<Measurement> WithPoison, Measurement Poison) Streams()
    {
        var drive = SimpleDrive.Create(seed: 71, durationS: 120, gyroBiasRps: 0.003);
        var clean = drive.Measurements.OrderBy(m => m.TimeUs).ThenBy(m => m.OrderKey).ToList();
        var fix = clean.First(m => m.Kind == SensorKind.GnssPosition && m.TimeUs > SimpleDrive.StartUs + 70_000_000);
        GnssFixView at = fix.AsGnssFix();
        var poison = Measurement.FromStored(
            fix.TimeUs + 500_000, Measurement.OrderKeyOf(SensorKind.GnssPosition, PoisonKey), at.LatitudeDeg, at.LongitudeDeg, float.PositiveInfinity);
        var withPoison = clean.Append(poison).OrderBy(m => m.TimeUs).ThenBy(m => m.OrderKey).ToList();
        return (clean, withPoison, poison);
    }

    private static VehicleTrack Run(TrackProcessor processor, List<Measurement> stream, out OutcomeLog log)
    {
        log = new OutcomeLog();
        var track = new VehicleTrack(processor);
        foreach (var m in stream)
        {
            track.Process(m, log);
        }

        return track;
    }
}
