// Observations of a cumulative histogram between two scrapes.
namespace FusionService.LoadTools;

/// <summary>What a Prometheus histogram gained between two scrapes.</summary>
/// <param name="Count">Observations.</param>
/// <param name="MeanS">Their mean, seconds (NaN without observations).</param>
/// <param name="CumulativeBuckets">Cumulative bucket counts by upper bound (seconds, ascending, last +Inf).</param>
public sealed record HistogramDelta(long Count, double MeanS, IReadOnlyList<(double UpperS, double Count)> CumulativeBuckets)
{
    /// <summary>The smallest bucket bound with at least <paramref name="quantile"/> of the observations at or below it
    /// (an upper bound of the true quantile; +Inf beyond the last finite bucket, NaN without observations).</summary>
    public double QuantileUpperBoundS(double quantile)
    {
        if (Count == 0)
        {
            return double.NaN;
        }

        foreach (var (upper, count) in CumulativeBuckets)
        {
            if (count >= quantile * Count)
            {
                return upper;
            }
        }

        return double.PositiveInfinity;
    }
}
