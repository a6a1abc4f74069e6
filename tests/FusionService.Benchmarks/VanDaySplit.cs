// Stopwatch split of the van day's smoothing work: filter alone, filter with the compacting recorder, backward pass.
using System.Diagnostics;
using System.Globalization;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// Times the parts of <see cref="CompactedTrackReplay.Run"/> over <see cref="VanDayScenario"/> with a stopwatch
/// (<c>./build.sh bench vanday-split [repeats]</c>): the forward filter with no recorder, the forward filter with the
/// compacting recorder, the compacted backward pass, and the whole smoothing as two stretches filtered side by side from
/// the state at the middle measurement (as the service splits a window at a stored checkpoint). Best and median of the
/// repeats, milliseconds.
/// </summary>
internal static class VanDaySplit
{
    /// <summary>Runs the split and prints one line per part.</summary>
    /// <param name="repeats">Repeats of each part (the first run is also a warm-up and counted).</param>
    public static void Run(int repeats)
    {
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        Measurement[] day = VanDayScenario.Instance.Measurements;
        var filterMs = new List<double>();
        var recordMs = new List<double>();
        var backwardMs = new List<double>();
        var stretchesMs = new List<double>();

        // The state after the middle measurement, as a stored checkpoint would hold it, for the two-stretch replay.
        int middle = day.Length / 2;
        TrackState atMiddle = TrackState.Empty;
        foreach (Measurement m in day.AsSpan(0, middle))
        {
            if (atMiddle.Phase != TrackPhase.Running || m.TimeUs >= atMiddle.TimeUs)
            {
                processor.Process(ref atMiddle, m);
            }
        }

        int instants = 0;
        int stretchInstants = 0;
        ulong digest = 0;
        for (int r = 0; r < repeats; r++)
        {
            var sw = Stopwatch.StartNew();
            TrackState state = TrackState.Empty;
            foreach (Measurement m in day)
            {
                if (state.Phase == TrackPhase.Running && m.TimeUs < state.TimeUs)
                {
                    continue;
                }

                processor.Process(ref state, m);
            }

            filterMs.Add(sw.Elapsed.TotalMilliseconds);

            sw.Restart();
            var recorder = new CompactingStepRecorder(1_000_000, expectedInstants: (int)((day[^1].TimeUs - day[0].TimeUs) / 1_000_000) + 2);
            state = TrackState.Empty;
            foreach (Measurement m in day)
            {
                if (state.Phase == TrackPhase.Running && m.TimeUs < state.TimeUs)
                {
                    continue;
                }

                processor.Process(ref state, m, recorder);
            }

            recorder.Complete();
            recordMs.Add(sw.Elapsed.TotalMilliseconds);

            sw.Restart();
            instants = 0;
            var smoothed = new List<SmoothedSegment>();
            foreach (CompactedSegment segment in recorder.Segments)
            {
                CompactedRauchTungStriebelSmoother.Smooth(segment);
                smoothed.Add(segment.ToSmoothedSegment());
                instants += smoothed[^1].Count;
            }

            backwardMs.Add(sw.Elapsed.TotalMilliseconds);
            digest = Digest(smoothed);

            // Two stretches side by side (as the service splits a window at a stored checkpoint), joined and smoothed.
            sw.Restart();
            long expected = (day[^1].TimeUs - day[0].TimeUs) / 2_000_000;
            var firstHalf = Task.Run(() => CompactedTrackReplay.Forward(processor, TrackState.Empty, day[..middle], 1_000_000, expectedInstants: (int)expected));
            var secondHalf = Task.Run(() => CompactedTrackReplay.Forward(processor, atMiddle, day[middle..], 1_000_000, expectedInstants: (int)expected));
            var joined = CompactedTrackReplay.Smooth([firstHalf.Result, secondHalf.Result]);
            stretchesMs.Add(sw.Elapsed.TotalMilliseconds);
            stretchInstants = joined.Sum(s => s.Count);
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"van day: {day.Length} measurements, {instants} smoothed instants, {repeats} repeats, digest of the smoothed means, covariances and gains {digest:x16}"));
        Print("forward filter, no recorder", filterMs);
        Print("forward filter + compacting recorder", recordMs);
        Print("compacted backward pass + segments", backwardMs);
        Print($"two stretches side by side, joined, smoothed ({stretchInstants} instants)", stretchesMs);
    }

    /// <summary>A bitwise digest of every smoothed mean, covariance and gain, to compare two builds bit for bit.</summary>
    private static ulong Digest(List<SmoothedSegment> segments)
    {
        ulong h = 14695981039346656037;
        void Mix(double v) => h = (h ^ (ulong)BitConverter.DoubleToInt64Bits(v)) * 1099511628211;
        foreach (SmoothedSegment s in segments)
        {
            for (int k = 0; k < s.Count; k++)
            {
                for (int i = 0; i < StateVector.Length; i++)
                {
                    Mix(s.Means[k][i]);
                }

                for (int i = 0; i < StateMatrix.Length; i++)
                {
                    Mix(s.Covariances[k][i]);
                    Mix(s.Gains[k][i]);
                }
            }
        }

        return h;
    }

    private static void Print(string what, List<double> ms)
    {
        ms.Sort();
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"{what,-40} best {ms[0],8:F0} ms  median {ms[ms.Count / 2],8:F0} ms"));
    }
}
