using System.Globalization;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Smoothing;

/// <summary>
/// A replay split at checkpoints and filtered stretch by stretch (side by side in the service), then joined by
/// <see cref="CompactedTrackReplay.Smooth"/>, against the full-step extended RTS smoother over the same measurements in
/// one go (<see cref="TrackReplay"/>; Rauch, Tung and Striebel 1965). A seam only changes which instants are recorded
/// after it; at every recorded instant the estimate is the same fixed-interval smoothed one, so the two agree to
/// round-off. Data: an invented delivery round with 1 % GNSS jumps.
/// </summary>
public sealed class SplitReplayTests(ITestOutputHelper output)
{
    private static readonly Lazy<Measurement[]> Round = new(() =>
    {
        TruthTrajectory truth = new DeliveryNetwork().PlanRound(3, stopCount: 4, seed: 6262, minDwellS: 20, maxDwellS: 60).Drive();
        var suite = SensorSuite.ForProfile(NoiseProfile.DeliveryVan) with { OutlierProbability = 0.01 };
        return [.. MeasurementGenerator.Generate(truth, suite, seed: 79).Measurements];
    });

    private static TrackProcessor Processor { get; } = new(new TrackOptions(), NoiseProfile.DeliveryVan);

    [Theory]
    [InlineData(1_000_000L, 2)]
    [InlineData(1_000_000L, 3)]
    [InlineData(0L, 2)]
    public void Stretches_joined_at_checkpoints_smooth_like_one_replay(long intervalUs, int parts)
    {
        Measurement[] all = Round.Value;
        ReplayResult full = TrackReplay.Run(Processor, TrackState.Empty, all);
        var whole = full.Smoothed;

        // Checkpoints: the filter's state after the measurement at each split index, as the live track stores them.
        // Offsets of a few measurements put the seams between the 1 s instants the replay in one go records.
        var splits = Enumerable.Range(1, parts - 1).Select(i => (i * all.Length / parts) + (7 * i)).ToArray();
        var passes = new List<ForwardPass>();
        TrackState start = TrackState.Empty;
        int from = 0;
        foreach (int end in splits.Append(all.Length))
        {
            ForwardPass pass = CompactedTrackReplay.Forward(Processor, start, all[from..end], intervalUs);
            passes.Add(pass);
            start = pass.End;
            Assert.Equal(TrackPhase.Running, start.Phase);
            from = end;
        }

        var joined = CompactedTrackReplay.Smooth(passes);
        Assert.Equal(whole.Count, joined.Count);
        int compared = 0;
        double worstPositionM = 0;
        for (int s = 0; s < whole.Count; s++)
        {
            SmoothedSegment a = whole[s], b = joined[s];
            var atTime = new Dictionary<long, int>();
            for (int k = 0; k < a.Count; k++)
            {
                atTime[a.TimesUs[k]] = k;
            }

            for (int k = 0; k < b.Count; k++)
            {
                // Several instants may share a time (measurements taken together, a seam); the last one of a time is the state
                // after all its measurements, as is the full-step smoother's last step of that time.
                if (k + 1 < b.Count && b.TimesUs[k + 1] == b.TimesUs[k])
                {
                    continue;
                }

                int j = atTime[b.TimesUs[k]];

                string at = string.Create(CultureInfo.InvariantCulture, $" at {b.TimesUs[k]} us");
                StateVector x = b.Means[k], y = a.Means[j];
                StateMatrix p = b.Covariances[k], q = a.Covariances[j];

                // Tolerances as in CompactedSmootherTests (derived: the same algebra, so only round-off may differ).
                AssertNear.Equal(y[EastM], x[EastM], 1e-6, "smoothed east (m)" + at);
                AssertNear.Equal(y[NorthM], x[NorthM], 1e-6, "smoothed north (m)" + at);
                AssertNear.EqualAngle(y[HeadingRad], x[HeadingRad], 1e-9, "smoothed heading (rad)" + at);
                AssertNear.Equal(y[SpeedMps], x[SpeedMps], 1e-6, "smoothed speed (m/s)" + at);
                AssertNear.Equal(y[WheelScale], x[WheelScale], 1e-9, "smoothed wheel scale" + at);
                AssertNear.Equal(q[0], p[0], 1e-9, "smoothed east variance (m²)" + at);
                AssertNear.Equal(q[StateMatrix.Size + 1], p[StateMatrix.Size + 1], 1e-9, "smoothed north variance (m²)" + at);
                worstPositionM = Math.Max(worstPositionM, Math.Max(Math.Abs(x[EastM] - y[EastM]), Math.Abs(x[NorthM] - y[NorthM])));
                compared++;
            }
        }

        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"{parts} stretches at interval {intervalUs / 1e6:F1} s: {compared} instants compared ({joined.Sum(s => s.Count)} joined, "
            + $"{whole.Sum(s => s.Count)} full steps), largest position difference {worstPositionM:E2} m"));
        Assert.True(compared > 0.9 * joined.Sum(s => s.Count), $"only {compared} instants compared");
    }

    [Fact]
    public void A_stretch_that_does_not_start_where_the_previous_ended_is_refused()
    {
        Measurement[] all = Round.Value;
        ForwardPass first = CompactedTrackReplay.Forward(Processor, TrackState.Empty, all[..(all.Length / 2)], 1_000_000);
        TrackState elsewhere = TrackState.Empty;
        foreach (Measurement m in all[..((all.Length / 2) + 50)])
        {
            if (elsewhere.Phase != TrackPhase.Running || m.TimeUs >= elsewhere.TimeUs)
            {
                Processor.Process(ref elsewhere, m);
            }
        }

        ForwardPass second = CompactedTrackReplay.Forward(Processor, elsewhere, all[((all.Length / 2) + 50)..], 1_000_000);
        Assert.Throws<ArgumentException>(() => CompactedTrackReplay.Smooth([first, second]));
    }
}
