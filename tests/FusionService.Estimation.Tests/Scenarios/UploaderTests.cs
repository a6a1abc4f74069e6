using FusionService.Estimation.Measurements;
using FusionService.Scenarios;

namespace FusionService.Estimation.Tests.Scenarios;

public class UploaderTests
{
    private static readonly IReadOnlyList<Measurement> Measurements = MeasurementGenerator.Generate(
        new DeliveryNetwork().PlanRound(1, 3, seed: 5, minDwellS: 30, maxDwellS: 60).Drive(), new SensorSuite(), 5).Measurements;

    private static void AssertEveryMeasurementArrives(ArrivalSchedule schedule)
    {
        for (int i = 1; i < schedule.Arrivals.Count; i++)
        {
            Assert.True(schedule.Arrivals[i].ArrivalTimeUs >= schedule.Arrivals[i - 1].ArrivalTimeUs);
        }

        Assert.Equal(
            Measurements.Select(m => m.MessageKey).Order(),
            schedule.Arrivals.Where(a => !a.IsRetryCopy).Select(a => a.Measurement.MessageKey).Order());
        Assert.All(schedule.Arrivals, a => Assert.True(a.ArrivalTimeUs > a.Measurement.TimeUs, "arrived before it was measured"));
    }

    // The bounds below follow from the configuration (derived): a measurement waits at most one batch interval for its
    // batch to close, then one network delay; a retry copy or a late batch adds its own configured delay.
    [Fact]
    public void Batching_delay_respects_batch_interval_plus_network_delay()
    {
        var options = new UploaderOptions { RetryProbability = 0, LateProbability = 0 };
        ArrivalSchedule schedule = Uploader.Upload(Measurements, options, 1);
        AssertEveryMeasurementArrives(schedule);
        Assert.Equal(0, schedule.RetryCopyCount);
        Assert.Equal(Measurements.Count, schedule.Arrivals.Count);
        Assert.Equal(0, schedule.MaxLagBehindNewestUs);
        double boundUs = (options.BatchIntervalMaxS + options.NetworkDelayMaxS) * 1e6;
        AssertNear.AtMost(boundUs, schedule.MaxDelayUs, 1.0, "largest delay (us)");
        foreach (MeasurementArrival a in schedule.Arrivals)
        {
            AssertNear.Within(options.NetworkDelayMinS * 1e6, boundUs, a.ArrivalTimeUs - a.Measurement.TimeUs, 1.0, "delay (us)");
        }

        // Intervals lie in [5, 30) s, so the batches number between span / 30 s and span / 5 s + 1 (derived).
        long spanUs = Measurements[^1].TimeUs - Measurements[0].TimeUs;
        AssertNear.Within(spanUs / 30e6, (spanUs / 5e6) + 1, schedule.BatchCount, 0.0, "batch count");
    }

    [Fact]
    public void Retries_duplicate_whole_batches()
    {
        ArrivalSchedule schedule = Uploader.Upload(Measurements, new UploaderOptions { RetryProbability = 0.3 }, 2);
        AssertEveryMeasurementArrives(schedule);
        Assert.True(schedule.RetryCopyCount > 0);
        Assert.Equal(Measurements.Count + schedule.RetryCopyCount, schedule.Arrivals.Count);
        foreach (IGrouping<int, MeasurementArrival> batch in schedule.Arrivals.GroupBy(a => a.BatchIndex))
        {
            var originals = batch.Where(a => !a.IsRetryCopy).Select(a => a.Measurement).ToList();
            var copies = batch.Where(a => a.IsRetryCopy).Select(a => a.Measurement).ToList();
            Assert.True(copies.Count == 0 || copies.SequenceEqual(originals), $"batch {batch.Key} copy is not the whole batch");
            if (copies.Count > 0)
            {
                Assert.True(batch.Where(a => a.IsRetryCopy).Min(a => a.ArrivalTimeUs) > batch.Where(a => !a.IsRetryCopy).Max(a => a.ArrivalTimeUs));
            }
        }

        int duplicateKeys = schedule.Arrivals.GroupBy(a => a.Measurement.MessageKey).Count(g => g.Count() > 1);
        Assert.Equal(schedule.RetryCopyCount, duplicateKeys);
    }

    [Fact]
    public void Late_uploads_arrive_minutes_late_and_out_of_order()
    {
        var options = new UploaderOptions { LateProbability = 0.2, RetryProbability = 0 };
        ArrivalSchedule schedule = Uploader.Upload(Measurements, options, 3);
        AssertEveryMeasurementArrives(schedule);
        AssertNear.Within(options.LateDelayMinS * 1e6, (options.LateDelayMaxS + options.BatchIntervalMaxS + options.NetworkDelayMaxS) * 1e6, schedule.MaxDelayUs, 1.0, "largest delay (us)");
        Assert.True(schedule.MaxLagBehindNewestUs > 60_000_000);
    }

    [Fact]
    public void Bounded_window_mode_keeps_every_arrival_within_the_window_of_the_newest_delivered()
    {
        var unbounded = new UploaderOptions { LateProbability = 0.2, RetryProbability = 0.3 };
        var bounded = unbounded with { MaxLagWindowS = 45 };
        Assert.True(Uploader.Upload(Measurements, unbounded, 4).MaxLagBehindNewestUs > 45_000_000);
        ArrivalSchedule schedule = Uploader.Upload(Measurements, bounded, 4);
        AssertEveryMeasurementArrives(schedule);
        Assert.True(schedule.RetryCopyCount > 0);
        long newest = long.MinValue;
        foreach (MeasurementArrival a in schedule.Arrivals)
        {
            if (newest != long.MinValue)
            {
                AssertNear.AtMost(45e6, newest - a.Measurement.TimeUs, 0.0, "lag behind the newest delivered (us)");
            }

            newest = Math.Max(newest, a.Measurement.TimeUs);
        }

        Assert.True(schedule.MaxLagBehindNewestUs > 0, "bounded mode should still reorder");
    }

    [Fact]
    public void Shuffle_with_bounded_lag_reorders_within_the_bound()
    {
        const long maxLagUs = 3_000_000;
        ArrivalSchedule schedule = Uploader.ShuffleWithBoundedLag(Measurements, maxLagUs, 6);
        AssertEveryMeasurementArrives(schedule);
        AssertNear.AtMost(maxLagUs, schedule.MaxLagBehindNewestUs, 0.0, "lag behind the newest delivered (us)");
        Assert.True(schedule.MaxLagBehindNewestUs > maxLagUs / 2);
        Assert.NotEqual(Measurements, schedule.Arrivals.Select(a => a.Measurement));
        Assert.Equal(schedule.Arrivals, Uploader.ShuffleWithBoundedLag(Measurements, maxLagUs, 6).Arrivals);
    }

    [Fact]
    public void Permutation_with_bounded_lag_never_lets_an_item_overtake_by_more_than_the_lag()
    {
        int[] items = Enumerable.Range(0, 1000).ToArray();
        int[] permuted = Uploader.PermuteWithBoundedLag(items, 5, 7);
        Assert.Equal(items, permuted.Order());
        Assert.NotEqual(items, permuted);
        int newest = -1;
        int largestLag = 0;
        foreach (int x in permuted)
        {
            largestLag = Math.Max(largestLag, newest - x);
            newest = Math.Max(newest, x);
        }

        Assert.InRange(largestLag, 1, 5);
        Assert.Equal(items, Uploader.PermuteWithBoundedLag(items, 0, 7));
    }
}
