// Measurements in the order a server receives them.
using System.Collections.ObjectModel;

namespace FusionService.Scenarios;

/// <summary>Measurements in arrival order (ties keep their delivery order), as produced by <see cref="Uploader"/>.</summary>
public sealed class ArrivalSchedule
{
    internal ArrivalSchedule(MeasurementArrival[] arrivals, int batchCount)
    {
        Arrivals = Array.AsReadOnly(arrivals);
        BatchCount = batchCount;
        long newest = long.MinValue;
        foreach (MeasurementArrival a in arrivals)
        {
            if (a.IsRetryCopy)
            {
                RetryCopyCount++;
            }

            MaxDelayUs = Math.Max(MaxDelayUs, a.ArrivalTimeUs - a.Measurement.TimeUs);
            if (newest != long.MinValue)
            {
                MaxLagBehindNewestUs = Math.Max(MaxLagBehindNewestUs, newest - a.Measurement.TimeUs);
            }

            newest = Math.Max(newest, a.Measurement.TimeUs);
        }
    }

    /// <summary>Arrivals in the order the server receives them; arrival times never decrease.</summary>
    public ReadOnlyCollection<MeasurementArrival> Arrivals { get; }

    /// <summary>Number of distinct batches (retry copies not counted).</summary>
    public int BatchCount { get; }

    /// <summary>Number of arrivals that are retry copies (duplicates of an earlier arrival).</summary>
    public int RetryCopyCount { get; }

    /// <summary>Largest arrival time minus measurement time, microseconds.</summary>
    public long MaxDelayUs { get; }

    /// <summary>
    /// Largest lag of an arrival behind the newest measurement delivered before it (newest earlier measurement time minus
    /// its own time), microseconds; 0 when every measurement arrives in time order.
    /// </summary>
    public long MaxLagBehindNewestUs { get; }
}
