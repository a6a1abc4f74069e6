// The full sensor mix through a live track, in order.
using BenchmarkDotNet.Attributes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// 1 Hz GNSS position and velocity, 10 Hz wheel speed and 10 Hz IMU through <see cref="VehicleTrack.Process"/> in
/// canonical order, per measurement. Every iteration gets a fresh track already fed 200 s of the scenario (so its lag
/// window is full and its buffers have reached their steady size), built in [IterationSetup] outside the measurement;
/// the invocation then processes the next <see cref="Count"/> measurements (about 90 s). One invocation per iteration,
/// as BenchmarkDotNet requires with an iteration setup.
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 8, iterationCount: 20, invocationCount: 1)]
public class MixedStreamBenchmarks
{
    /// <summary>Measurements per invocation.</summary>
    public const int Count = 2000;

    private const double WarmUpS = 200.0;

    private TrackProcessor _processor = null!;
    private Measurement[] _warmUp = [];
    private Measurement[] _sequence = [];
    private VehicleTrack _track = null!;

    /// <summary>Builds the scenario and cuts the warm-up and the measured sequence.</summary>
    [GlobalSetup]
    public void Setup()
    {
        BenchmarkScenario scenario = BenchmarkScenario.Instance;
        _processor = new TrackProcessor(BenchmarkScenario.Options, NoiseProfile.DeliveryVan);
        _warmUp = scenario.Between(0, WarmUpS);
        _sequence = scenario.Between(WarmUpS, 1e9).Take(Count).ToArray();
    }

    /// <summary>A fresh track fed the warm-up.</summary>
    [IterationSetup]
    public void BuildTrack()
    {
        _track = new VehicleTrack(_processor);
        foreach (Measurement m in _warmUp)
        {
            _track.Process(m);
        }
    }

    /// <summary>The next <see cref="Count"/> measurements, in order.</summary>
    [Benchmark(OperationsPerInvoke = Count)]
    public double InOrder()
    {
        VehicleTrack track = _track;
        Measurement[] sequence = _sequence;
        for (int i = 0; i < sequence.Length; i++)
        {
            track.Process(sequence[i]);
        }

        return track.Current.X[StateIndex.EastM];
    }
}
