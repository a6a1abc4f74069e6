// Simulates how a tracker uploads measurements: batches, network delay, retries, late uploads.
using FusionService.Estimation.Measurements;

namespace FusionService.Scenarios;

/// <summary>
/// Turns time-ordered measurements into the order a server receives them, for out-of-order and duplicate handling
/// tests. Deterministic for a given seed.
/// </summary>
public static class Uploader
{
    private const ulong UploadStream = 0x55504C4FUL;
    private const ulong ShuffleStream = 0x5348554655UL;

    /// <summary>
    /// Batches the measurements as a tracker would: a batch closes every interval (uniform in the configured range) from
    /// the first measurement and holds everything measured before it closes; it arrives after a network delay, plus an
    /// extra delay when late; a retried batch arrives a second time, whole, after the retry delay. With
    /// <see cref="UploaderOptions.MaxLagWindowS"/> set, any delivery that would arrive more than the window behind the
    /// newest measurement already delivered is moved to just before the first delivery that would break the bound.
    /// </summary>
    /// <param name="measurements">Measurements with non-decreasing times (canonical order).</param>
    /// <param name="options">Upload behaviour.</param>
    /// <param name="seed">Seed of the intervals, delays and retries.</param>
    public static ArrivalSchedule Upload(IReadOnlyList<Measurement> measurements, UploaderOptions options, int seed)
    {
        ArgumentNullException.ThrowIfNull(measurements);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        RequireTimeOrder(measurements);
        if (measurements.Count == 0)
        {
            return new ArrivalSchedule([], 0);
        }

        var rng = new ScenarioRandom(seed, UploadStream);
        var deliveries = new List<Delivery>();
        long boundaryUs = measurements[0].TimeUs;
        int first = 0, batch = 0;
        while (first < measurements.Count)
        {
            boundaryUs += ToUs(rng.NextUniform(options.BatchIntervalMinS, options.BatchIntervalMaxS));
            double delayS = rng.NextUniform(options.NetworkDelayMinS, options.NetworkDelayMaxS);
            bool late = rng.NextBernoulli(options.LateProbability);
            double lateS = rng.NextUniform(options.LateDelayMinS, options.LateDelayMaxS);
            bool retry = rng.NextBernoulli(options.RetryProbability);
            double retryS = rng.NextUniform(options.RetryDelayMinS, options.RetryDelayMaxS);
            int end = first;
            while (end < measurements.Count && measurements[end].TimeUs < boundaryUs)
            {
                end++;
            }

            if (end == first)
            {
                continue;
            }

            long arrivalUs = boundaryUs + ToUs(delayS + (late ? lateS : 0.0));
            deliveries.Add(new Delivery(batch, first, end, boundaryUs, arrivalUs, false));
            if (retry)
            {
                deliveries.Add(new Delivery(batch, first, end, boundaryUs, arrivalUs + ToUs(retryS), true));
            }

            batch++;
            first = end;
        }

        if (options.MaxLagWindowS is double windowS)
        {
            BoundLag(deliveries, measurements, ToUs(windowS));
        }

        deliveries.Sort((x, y) =>
        {
            int c = x.ArrivalUs.CompareTo(y.ArrivalUs);
            if (c != 0)
            {
                return c;
            }

            c = measurements[x.First].TimeUs.CompareTo(measurements[y.First].TimeUs);
            return c != 0 ? c : x.Order.CompareTo(y.Order);
        });
        var arrivals = new List<MeasurementArrival>(measurements.Count);
        foreach (Delivery d in deliveries)
        {
            for (int i = d.First; i < d.End; i++)
            {
                arrivals.Add(new MeasurementArrival(d.ArrivalUs, measurements[i], d.Batch, d.IsRetryCopy));
            }
        }

        return new ArrivalSchedule([.. arrivals], batch);
    }

    /// <summary>
    /// A random reordering with bounded lag in time: each measurement gets arrival time = its time + a uniform delay in
    /// [0, <paramref name="maxLagUs"/>], and arrivals are sorted by that (ties in input order). Hence no measurement arrives
    /// more than <paramref name="maxLagUs"/> behind the newest one delivered before it.
    /// </summary>
    /// <param name="measurements">Measurements with non-decreasing times.</param>
    /// <param name="maxLagUs">Largest lag, microseconds, non-negative.</param>
    /// <param name="seed">Seed of the delays.</param>
    public static ArrivalSchedule ShuffleWithBoundedLag(IReadOnlyList<Measurement> measurements, long maxLagUs, int seed)
    {
        ArgumentNullException.ThrowIfNull(measurements);
        ArgumentOutOfRangeException.ThrowIfNegative(maxLagUs);
        RequireTimeOrder(measurements);
        var rng = new ScenarioRandom(seed, ShuffleStream);
        var arrivals = new MeasurementArrival[measurements.Count];
        for (int i = 0; i < arrivals.Length; i++)
        {
            arrivals[i] = new MeasurementArrival(measurements[i].TimeUs + rng.NextInt64(0, maxLagUs + 1), measurements[i], i, false);
        }

        Array.Sort(arrivals, (x, y) => x.ArrivalTimeUs != y.ArrivalTimeUs ? x.ArrivalTimeUs.CompareTo(y.ArrivalTimeUs) : x.BatchIndex.CompareTo(y.BatchIndex));
        return new ArrivalSchedule(arrivals, arrivals.Length);
    }

    /// <summary>
    /// A random permutation of <paramref name="items"/> in which no item is preceded by an item more than
    /// <paramref name="maxLagPositions"/> places after it in the input (sort by index + uniform [0, lag + 1)).
    /// </summary>
    /// <typeparam name="T">Item type.</typeparam>
    /// <param name="items">Items in their original order.</param>
    /// <param name="maxLagPositions">Largest displacement, non-negative; 0 keeps the order.</param>
    /// <param name="seed">Seed of the permutation.</param>
    public static T[] PermuteWithBoundedLag<T>(IReadOnlyList<T> items, int maxLagPositions, int seed)
    {
        ArgumentNullException.ThrowIfNull(items);
        ArgumentOutOfRangeException.ThrowIfNegative(maxLagPositions);
        var rng = new ScenarioRandom(seed, ShuffleStream + 1);
        var keys = new double[items.Count];
        var order = new int[items.Count];
        for (int i = 0; i < keys.Length; i++)
        {
            keys[i] = i + ((maxLagPositions + 1) * rng.NextUniform());
            order[i] = i;
        }

        Array.Sort(order, (x, y) => keys[x] != keys[y] ? keys[x].CompareTo(keys[y]) : x.CompareTo(y));
        var result = new T[items.Count];
        for (int i = 0; i < result.Length; i++)
        {
            result[i] = items[order[i]];
        }

        return result;
    }

    private static long ToUs(double seconds) => (long)Math.Round(seconds * 1e6);

    private static void RequireTimeOrder(IReadOnlyList<Measurement> measurements)
    {
        for (int i = 1; i < measurements.Count; i++)
        {
            if (measurements[i].TimeUs < measurements[i - 1].TimeUs)
            {
                throw new ArgumentException($"measurement {i} is earlier than measurement {i - 1}; pass them in time order", nameof(measurements));
            }
        }
    }

    // Constraint: a delivery i must arrive no later than every delivery k with newest(k) - oldest(i) > window (ties
    // resolved older-first). Processed from the newest oldest-time down, every such k is final when i is reached,
    // because window >= batch span gives oldest(k) > oldest(i). A moved delivery never precedes its batch's creation:
    // arrival(k) >= created(k) > newest(k) > oldest(i) + window >= created(i).
    private static void BoundLag(List<Delivery> deliveries, IReadOnlyList<Measurement> measurements, long windowUs)
    {
        var byOldestDesc = Enumerable.Range(0, deliveries.Count)
            .OrderByDescending(i => measurements[deliveries[i].First].TimeUs)
            .ThenBy(i => i)
            .ToArray();
        for (int o = 0; o < deliveries.Count; o++)
        {
            int i = byOldestDesc[o];
            Delivery di = deliveries[i];
            long oldestUs = measurements[di.First].TimeUs;
            long arrivalUs = di.ArrivalUs;
            foreach (Delivery dk in deliveries)
            {
                if (measurements[dk.End - 1].TimeUs - oldestUs > windowUs && dk.ArrivalUs < arrivalUs)
                {
                    arrivalUs = dk.ArrivalUs;
                }
            }

            deliveries[i] = di with { ArrivalUs = arrivalUs };
        }
    }

    private sealed record Delivery(int Batch, int First, int End, long CreatedUs, long ArrivalUs, bool IsRetryCopy)
    {
        public int Order => (Batch * 2) + (IsRetryCopy ? 1 : 0);
    }
}
