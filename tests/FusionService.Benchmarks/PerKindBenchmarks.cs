// One measurement kind at a time through the fast processor and through the dense MathNet reference.
using BenchmarkDotNet.Attributes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tests.Reference;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// Predict + update + gate per measurement: a running track, warmed up on 120 s of the scenario, processes the next
/// <see cref="Count"/> measurements of one kind at their natural rate (1 Hz GNSS, 10 Hz wheel and IMU) from a copy of the
/// saved state. OperationsPerInvoke makes every figure per measurement. Baseline: the same sequence through
/// <see cref="ReferenceVehicleEkf"/> (dense MathNet matrices), whose construction from the saved state is inside the
/// invocation (one per <see cref="Count"/> measurements).
/// </summary>
[MemoryDiagnoser]
[ShortRunJob]
public class PerKindBenchmarks
{
    /// <summary>Measurements per invocation.</summary>
    public const int Count = 1000;

    private TrackProcessor _processor = null!;
    private TrackState _saved;
    private Measurement[] _sequence = [];

    /// <summary>The measurement kind of the sequence.</summary>
    [Params(SensorKind.GnssPosition, SensorKind.GnssVelocity, SensorKind.WheelSpeed, SensorKind.Imu)]
    public SensorKind Kind { get; set; }

    /// <summary>Builds the scenario, warms the track up and cuts the sequence.</summary>
    [GlobalSetup]
    public void Setup()
    {
        BenchmarkScenario scenario = BenchmarkScenario.Instance;
        _processor = new TrackProcessor(BenchmarkScenario.Options, NoiseProfile.DeliveryVan);
        (_saved, int next) = scenario.WarmState(_processor, 120.0);
        _sequence = scenario.Measurements.Skip(next).Where(m => m.Kind == Kind).Take(Count).ToArray();
        if (_sequence.Length != Count)
        {
            throw new InvalidOperationException($"the scenario holds only {_sequence.Length} {Kind} measurements after the warm-up");
        }

        Describe();
    }

    /// <summary>Prints what the sequence holds and how both filters gated it, so the two rows can be compared fairly.</summary>
    private void Describe()
    {
        TrackState state = _saved;
        var reference = new ReferenceVehicleEkf(_saved, BenchmarkScenario.Options, NoiseProfile.DeliveryVan);
        int fastAccepted = 0, denseAccepted = 0, agree = 0, stationary = 0;
        foreach (Measurement m in _sequence)
        {
            OutcomeKind fast = _processor.Process(ref state, m).Kind;
            OutcomeKind dense = reference.Process(m);
            fastAccepted += fast == OutcomeKind.Accepted ? 1 : 0;
            denseAccepted += dense == OutcomeKind.Accepted ? 1 : 0;
            agree += fast == dense ? 1 : 0;
            stationary += state.Stationary ? 1 : 0;
        }

        double spanS = (_sequence[^1].TimeUs - _sequence[0].TimeUs) / 1e6;
        Console.WriteLine(string.Create(
            System.Globalization.CultureInfo.InvariantCulture,
            $"// {Kind}: {Count} measurements over {spanS:F1} s; accepted fast {fastAccepted}, dense {denseAccepted}; same outcome {agree}; fast track stationary after {stationary}"));
    }

    /// <summary>The fixed-size extended Kalman filter of the core.</summary>
    [Benchmark(OperationsPerInvoke = Count)]
    public double Fast()
    {
        TrackState state = _saved;
        Measurement[] sequence = _sequence;
        for (int i = 0; i < sequence.Length; i++)
        {
            _processor.Process(ref state, sequence[i]);
        }

        return state.X[StateIndex.EastM];
    }

    /// <summary>The dense MathNet reference filter.</summary>
    [Benchmark(Baseline = true, OperationsPerInvoke = Count)]
    public double DenseReference()
    {
        var reference = new ReferenceVehicleEkf(_saved, BenchmarkScenario.Options, NoiseProfile.DeliveryVan);
        Measurement[] sequence = _sequence;
        for (int i = 0; i < sequence.Length; i++)
        {
            reference.Process(sequence[i]);
        }

        return reference.Mean[StateIndex.EastM];
    }
}
