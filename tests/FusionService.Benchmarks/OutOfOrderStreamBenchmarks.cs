// A stream whose samples arrive one place out of order: what the recent checkpoints save a track.
using BenchmarkDotNet.Attributes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// Sixty seconds of the scenario's 22 Hz stream through <see cref="VehicleTrack.Process"/> on a track fed the 200 s before
/// it, in canonical order and with every second measurement delivered after the one that follows it (each swapped one a
/// sample late: what a van's measurements look like when concurrent requests carry them, as a gateway's batches do).
/// The track is built in [IterationSetup], outside the measurement; one invocation per iteration.
/// <see cref="RecentCheckpointIntervalS"/> 5 is the spacing a track had everywhere before the recent checkpoints (the
/// options then thin nothing); 1 is the default.
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 8, iterationCount: 30, invocationCount: 1)]
public class OutOfOrderStreamBenchmarks
{
    private const double FedS = 200.0;
    private const double StreamS = 60.0;

    private TrackProcessor _processor = null!;
    private Measurement[] _fed = [];
    private Measurement[] _inOrder = [];
    private Measurement[] _swapped = [];
    private VehicleTrack _track = null!;

    /// <summary>Spacing of the three newest checkpoints, seconds.</summary>
    [Params(1.0, 5.0)]
    public double RecentCheckpointIntervalS { get; set; }

    /// <summary>Cuts the stream and builds the swapped order.</summary>
    [GlobalSetup]
    public void Setup()
    {
        BenchmarkScenario scenario = BenchmarkScenario.Instance;
        _processor = new TrackProcessor(BenchmarkScenario.Options with { RecentCheckpointIntervalS = RecentCheckpointIntervalS }, NoiseProfile.DeliveryVan);
        _fed = scenario.Between(0, FedS);
        _inOrder = scenario.Between(FedS, FedS + StreamS);
        _swapped = [.. _inOrder];
        for (int i = 0; i + 1 < _swapped.Length; i += 2)
        {
            (_swapped[i], _swapped[i + 1]) = (_swapped[i + 1], _swapped[i]);
        }

        // Allocation of the swapped minute on a second fresh track, once the first has run every path.
        BuildTrack();
        Feed(_swapped);
        BuildTrack();
        long before = GC.GetAllocatedBytesForCurrentThread();
        Feed(_swapped);
        long allocated = GC.GetAllocatedBytesForCurrentThread() - before;
        Console.WriteLine(string.Create(
            System.Globalization.CultureInfo.InvariantCulture,
            $"// {_inOrder.Length} measurements over {StreamS:F0} s; swapped: {_inOrder.Length / 2} of them a sample late, {allocated} B allocated by the swapped minute, {_track.HeldCheckpoints} checkpoints held after it"));
    }

    /// <summary>A fresh track fed the 200 s before the stream.</summary>
    [IterationSetup]
    public void BuildTrack()
    {
        _track = new VehicleTrack(_processor);
        foreach (Measurement m in _fed)
        {
            _track.Process(m);
        }
    }

    /// <summary>The minute in canonical order.</summary>
    [Benchmark(Baseline = true)]
    public long InOrder() => Feed(_inOrder);

    /// <summary>The minute with every second measurement a sample late.</summary>
    [Benchmark]
    public long EverySecondOneLate() => Feed(_swapped);

    private long Feed(Measurement[] stream)
    {
        foreach (Measurement m in stream)
        {
            _track.Process(m);
        }

        return _track.NewestTimeUs;
    }
}
