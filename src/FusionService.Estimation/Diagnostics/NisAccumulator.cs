// Per-sensor sums of the normalised innovation squared for the NIS consistency test.
namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Sums the normalised innovation squared (NIS) of one sensor's fused measurements and their degrees of freedom, for
/// the mean NIS and its chi-square interval (<see cref="NisConsistencyTest"/>).
/// </summary>
/// <remarks>
/// The mean of K NIS values of total dimension K m is compared with [χ²(α/2; K m), χ²(1 - α/2; K m)] / K (Bar-Shalom,
/// Li and Kirubarajan 2001, NIS test; section from memory). Values are summed in the order they are added.
/// </remarks>
public sealed class NisAccumulator
{
    /// <summary>Number of NIS values added (K).</summary>
    public int Count { get; private set; }

    /// <summary>Sum of the NIS values added (dimensionless).</summary>
    public double Sum { get; private set; }

    /// <summary>Sum of the innovations' dimensions (the chi-square degrees of freedom, K m for a fixed dimension m).</summary>
    public int Dof { get; private set; }

    /// <summary>Mean NIS, <see cref="Sum"/> / <see cref="Count"/>; NaN when nothing was added.</summary>
    public double Mean => Count > 0 ? Sum / Count : double.NaN;

    /// <summary>Adds the NIS of one innovation of dimension <paramref name="dimension"/>.</summary>
    /// <param name="nis">Normalised innovation squared, dimensionless.</param>
    /// <param name="dimension">Dimension of the innovation, at least 1.</param>
    public void Add(double nis, int dimension)
    {
        Count = checked(Count + 1);
        Sum += nis;
        Dof = checked(Dof + dimension);
    }

    /// <summary>The two-sided interval of the mean NIS at <paramref name="probability"/> (see <see cref="NisConsistencyTest.Interval"/>).</summary>
    /// <param name="probability">Probability of the interval, in (0, 1). Default 0.95.</param>
    public (double Lower, double Upper) Interval(double probability = 0.95) => NisConsistencyTest.Interval(Count, Dof, probability);

    /// <summary>The verdict on the mean NIS (see <see cref="NisConsistencyTest.Judge"/>).</summary>
    /// <param name="minimumCount">Fewest values for a verdict other than insufficient. Default 10.</param>
    /// <param name="probability">Probability of the interval. Default 0.95.</param>
    public ConsistencyVerdict Judge(int minimumCount = 10, double probability = 0.95) =>
        NisConsistencyTest.Judge(Mean, Count, Dof, minimumCount, probability);
}
