// The `memory` mode: what one live track holds after two minutes of the full sensor mix.
using System.Globalization;
using System.Runtime.CompilerServices;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// Feeds <see cref="TrackCount"/> tracks (60 s lag window, one shared processor) the first 120 s of the scenario
/// (1 Hz GNSS position and velocity, 10 Hz wheel, 10 Hz IMU) and prints what one of them reports
/// (<see cref="VehicleTrack.ApproximateBytes"/>, held measurements and checkpoints) beside the managed bytes actually
/// retained per track: GC.GetTotalMemory(true) after building and holding all tracks, minus before, divided by the count.
/// </summary>
internal static class MemoryReport
{
    /// <summary>Tracks built for the retained-bytes measurement.</summary>
    public const int TrackCount = 1000;

    /// <summary>Seconds of the stream each track is fed.</summary>
    public const double FedS = 120.0;

    /// <summary>Target from the brief: at most 64 KB retained per track.</summary>
    public const long TargetBytesPerTrack = 64 * 1024;

    /// <summary>Runs the report and prints it to the console.</summary>
    public static void Run()
    {
        var options = BenchmarkScenario.Options with { LagWindowS = 60.0 };
        var processor = new TrackProcessor(options, NoiseProfile.DeliveryVan);
        Measurement[] stream = BenchmarkScenario.Instance.Between(0, FedS);

        // One track first, so that everything shared (scenario, processor, JIT, statics) exists before the baseline.
        VehicleTrack sample = Feed(new VehicleTrack(processor), stream);
        var tracks = new VehicleTrack[TrackCount];
        long before = GC.GetTotalMemory(forceFullCollection: true);
        for (int i = 0; i < tracks.Length; i++)
        {
            tracks[i] = Feed(new VehicleTrack(processor), stream);
        }

        long after = GC.GetTotalMemory(forceFullCollection: true);
        double retainedPerTrack = (after - before) / (double)TrackCount;
        GC.KeepAlive(tracks);

        CultureInfo c = CultureInfo.InvariantCulture;
        Console.WriteLine(string.Create(c, $"stream fed to each track: {stream.Length} measurements over {FedS:F0} s (lag window {options.LagWindowS:F0} s, checkpoints every {options.CheckpointIntervalS:F0} s, the {options.RecentCheckpoints} newest every {options.RecentCheckpointIntervalS:F0} s)"));
        Console.WriteLine(string.Create(c, $"VehicleTrack.ApproximateBytes: {sample.ApproximateBytes} bytes"));
        Console.WriteLine(string.Create(c, $"held measurements: {sample.HeldMeasurements}"));
        Console.WriteLine(string.Create(c, $"held checkpoints: {sample.HeldCheckpoints}"));
        int measurementBytes = Unsafe.SizeOf<Measurement>(), stateBytes = Unsafe.SizeOf<TrackState>();
        Console.WriteLine(string.Create(c, $"sizes: Measurement {measurementBytes} bytes, TrackState {stateBytes} bytes; held measurements alone {sample.HeldMeasurements * (long)measurementBytes} bytes"));
        Console.WriteLine(string.Create(c, $"managed bytes retained per track (GC.GetTotalMemory(true), {TrackCount} tracks): {retainedPerTrack:F0} bytes ({retainedPerTrack / 1024.0:F1} KB)"));
        Console.WriteLine(string.Create(c, $"target <= {TargetBytesPerTrack / 1024} KB per track: {(retainedPerTrack <= TargetBytesPerTrack ? "met" : "NOT met")}"));
    }

    private static VehicleTrack Feed(VehicleTrack track, Measurement[] stream)
    {
        foreach (Measurement m in stream)
        {
            track.Process(m);
        }

        return track;
    }
}
