// A GNSS fix that arrives 30 s late: insertion into the lag window and replay from the checkpoint before it.
using BenchmarkDotNet.Attributes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// Cost of one late measurement through <see cref="VehicleTrack.Process"/> (lag window 60 s, checkpoints every 5 s):
/// every iteration gets a fresh track fed 200 s of the scenario except the GNSS position fix 30 s before the newest
/// measurement; the invocation delivers that fix, which the track inserts and replays everything after the checkpoint
/// before it (30 to 35 s of the 22 Hz stream). The track is built in [IterationSetup], outside the measurement; one
/// invocation per iteration. <see cref="ReplayedMeasurements"/> reports how many measurements one invocation re-processes.
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 8, iterationCount: 30, invocationCount: 1)]
public class LateMeasurementBenchmarks
{
    private const double FedS = 200.0;
    private const double LateByS = 30.0;

    private TrackProcessor _processor = null!;
    private Measurement[] _onTime = [];
    private Measurement _late;
    private VehicleTrack _track = null!;
    private CountingObserver _counter = null!;

    /// <summary>Measurements re-processed by one late insertion (the late one included), counted in the global setup.</summary>
    public static int ReplayedMeasurements { get; private set; }

    /// <summary>Cuts the stream and picks the late fix.</summary>
    [GlobalSetup]
    public void Setup()
    {
        BenchmarkScenario scenario = BenchmarkScenario.Instance;
        _processor = new TrackProcessor(BenchmarkScenario.Options, NoiseProfile.DeliveryVan);
        Measurement[] fed = scenario.Between(0, FedS);
        long lateTimeUs = fed[^1].TimeUs - (long)(LateByS * 1e6);
        int lateIndex = Array.FindIndex(fed, m => m.Kind == SensorKind.GnssPosition && m.TimeUs >= lateTimeUs);
        _late = fed[lateIndex];
        _onTime = [.. fed[..lateIndex], .. fed[(lateIndex + 1)..]];

        BuildTrack();
        _counter = new CountingObserver();
        OutcomeKind outcome = _track.Process(_late, _counter).Kind;
        ReplayedMeasurements = _counter.Count;
        Console.WriteLine(string.Create(
            System.Globalization.CultureInfo.InvariantCulture,
            $"// late fix {(fed[^1].TimeUs - _late.TimeUs) / 1e6:F1} s behind the newest measurement, outcome {outcome}; one insertion re-processes {ReplayedMeasurements} measurements"));
    }

    /// <summary>A fresh track fed everything but the late fix.</summary>
    [IterationSetup]
    public void BuildTrack()
    {
        _track = new VehicleTrack(_processor);
        foreach (Measurement m in _onTime)
        {
            _track.Process(m);
        }
    }

    /// <summary>Delivers the late fix.</summary>
    [Benchmark]
    public OutcomeKind LateFix30s() => _track.Process(_late).Kind;

    private sealed class CountingObserver : ITrackObserver
    {
        public int Count { get; private set; }

        public void OnOutcome(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay) => Count++;
    }
}
