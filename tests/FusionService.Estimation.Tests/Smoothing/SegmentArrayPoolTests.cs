using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;

namespace FusionService.Estimation.Tests.Smoothing;

/// <summary>
/// Smoothing with pooled segment arrays (<see cref="SegmentArrayPool"/>) gives the same numbers as with new arrays, bit
/// for bit, also when the arrays handed out still hold an earlier replay's values, and when a segment outgrows the room
/// made up front. Data: an invented delivery round (the same kind as <see cref="CompactedSmootherTests"/>).
/// </summary>
public sealed class SegmentArrayPoolTests
{
    private static readonly Lazy<Measurement[]> Round = new(() =>
    {
        TruthTrajectory truth = new DeliveryNetwork().PlanRound(2, stopCount: 3, seed: 5151, minDwellS: 20, maxDwellS: 40).Drive();
        return [.. MeasurementGenerator.Generate(truth, SensorSuite.ForProfile(NoiseProfile.DeliveryVan), seed: 78).Measurements];
    });

    private static TrackProcessor Processor { get; } = new(new TrackOptions(), NoiseProfile.DeliveryVan);

    [Theory]
    [InlineData(0)] // starts at 16 instants and grows by doubling through the pool
    [InlineData(4096)] // room for the whole round up front
    public void Pooled_replays_equal_unpooled_bit_for_bit_also_on_reused_arrays(int expectedInstants)
    {
        var all = Round.Value;
        var reference = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 1_000_000, expectedInstants: expectedInstants);
        var pool = new SegmentArrayPool();

        // A first replay over other data (every instant, a shorter stretch) fills arrays that go back to the pool.
        var earlier = CompactedTrackReplay.Run(Processor, TrackState.Empty, all[..(all.Length / 3)], 0, expectedInstants: expectedInstants, pool: pool);
        foreach (SmoothedSegment segment in earlier)
        {
            segment.Dispose();
        }

        var pooled = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 1_000_000, expectedInstants: expectedInstants, pool: pool);
        Assert.Equal(reference.Count, pooled.Count);
        for (int s = 0; s < reference.Count; s++)
        {
            SmoothedSegment a = reference[s], b = pooled[s];
            Assert.Equal(a.Count, b.Count);
            Assert.True(a.TimesUs.SequenceEqual(b.TimesUs), $"segment {s}: times differ");
            for (int k = 0; k < a.Count; k++)
            {
                Assert.True(Bits(a.Means[k]).SequenceEqual(Bits(b.Means[k])), $"segment {s}, instant {k}: means differ");
                Assert.True(Bits(a.Covariances[k]).SequenceEqual(Bits(b.Covariances[k])), $"segment {s}, instant {k}: covariances differ");
                Assert.True(Bits(a.Gains[k]).SequenceEqual(Bits(b.Gains[k])), $"segment {s}, instant {k}: gains differ");
            }
        }
    }

    [Fact]
    public void A_disposed_pooled_segment_is_empty_and_its_arrays_are_handed_out_again()
    {
        var all = Round.Value;
        var pool = new SegmentArrayPool();
        var first = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 1_000_000, expectedInstants: 4096, pool: pool);
        Assert.True(first[0].Count > 100);
        ref readonly StateMatrix firstCovariance = ref first[0].Covariances[0];
        ref readonly StateMatrix firstGain = ref first[0].Gains[0];
        first[0].Dispose();
        Assert.Equal(0, first[0].Count);
        Assert.True(first[0].Covariances.IsEmpty);
        first[0].Dispose(); // twice is harmless

        var second = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 1_000_000, expectedInstants: 4096, pool: pool);
        // Covariances and gains come from one bucket of 8 x 8 arrays, so either of the first segment's may come back.
        ref StateMatrix secondCovariance = ref Unsafe.AsRef(in second[0].Covariances[0]);
        Assert.True(
            Unsafe.AreSame(ref Unsafe.AsRef(in firstCovariance), ref secondCovariance) || Unsafe.AreSame(ref Unsafe.AsRef(in firstGain), ref secondCovariance),
            "the second replay should get one of the first one's 8 x 8 arrays back from the pool");
    }

    [Fact]
    public void Disposing_an_unpooled_segment_leaves_it_readable()
    {
        var segments = CompactedTrackReplay.Run(Processor, TrackState.Empty, Round.Value, 1_000_000);
        int count = segments[0].Count;
        segments[0].Dispose();
        Assert.Equal(count, segments[0].Count);
    }

    private static ReadOnlySpan<byte> Bits(in StateVector v) => MemoryMarshal.AsBytes((ReadOnlySpan<double>)v);

    private static ReadOnlySpan<byte> Bits(in StateMatrix m) => MemoryMarshal.AsBytes((ReadOnlySpan<double>)m);
}
