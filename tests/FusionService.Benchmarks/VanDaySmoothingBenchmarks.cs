// The smoothed track of a whole van day with the bounded-memory smoother (the track history endpoint's core work).
using BenchmarkDotNet.Attributes;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// <see cref="CompactedTrackReplay.Run"/> from the empty state over the whole invented van day of
/// <see cref="VanDayScenario"/> (about 550,000 measurements): forward filter with the compacting recorder (one smoothed
/// instant per second), the compacted RTS backward pass, and the distance with its standard deviation. Time and bytes
/// allocated per run, as measured.
/// </summary>
[MemoryDiagnoser]
[ShortRunJob]
public class VanDaySmoothingBenchmarks
{
    private TrackProcessor _processor = null!;
    private Measurement[] _day = [];

    /// <summary>Builds the day.</summary>
    [GlobalSetup]
    public void Setup()
    {
        _processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        _day = VanDayScenario.Instance.Measurements;
        Console.WriteLine($"// van day = {_day.Length} measurements over {(_day[^1].TimeUs - _day[0].TimeUs) / 3.6e9:F2} h");
    }

    /// <summary>Forward pass and compacted smoother over the day, smoothed instants 1 s apart.</summary>
    [Benchmark]
    public int SmoothVanDay1s() => CompactedTrackReplay.Run(_processor, TrackState.Empty, _day, 1_000_000).Count;

    /// <summary>The same followed by the distance and its standard deviation over the whole day.</summary>
    [Benchmark]
    public double SmoothVanDayAndDistance()
    {
        var segments = CompactedTrackReplay.Run(_processor, TrackState.Empty, _day, 1_000_000);
        return DistanceIntegrator.Integrate(segments, _day[0].TimeUs, _day[^1].TimeUs).DistanceM;
    }
}
