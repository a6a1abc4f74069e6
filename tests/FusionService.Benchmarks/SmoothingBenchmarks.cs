// After-the-fact filter and RTS smoother over ten minutes of the scenario.
using BenchmarkDotNet.Attributes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// <see cref="TrackReplay.Run"/> from the empty state over the first 600 s of the scenario (all four sensor kinds,
/// about 13,000 measurements): forward filter with step recording, then the RTS smoother. Time and bytes allocated per
/// run, as measured.
/// </summary>
[MemoryDiagnoser]
[ShortRunJob]
public class SmoothingBenchmarks
{
    private TrackProcessor _processor = null!;
    private Measurement[] _tenMinutes = [];

    /// <summary>Cuts the first ten minutes of the stream.</summary>
    [GlobalSetup]
    public void Setup()
    {
        _processor = new TrackProcessor(BenchmarkScenario.Options, NoiseProfile.DeliveryVan);
        _tenMinutes = BenchmarkScenario.Instance.Between(0, 600.0);
        Console.WriteLine($"// ten minutes = {_tenMinutes.Length} measurements");
    }

    /// <summary>Filter and smoother over ten minutes.</summary>
    [Benchmark]
    public int ReplayAndSmooth10Min() => TrackReplay.Run(_processor, TrackState.Empty, _tenMinutes).Smoothed.Count;
}
