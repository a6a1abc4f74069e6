using FusionService.Estimation.Diagnostics;
using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Tests.Diagnostics;

/// <summary>Summed NIS statistics and their chi-square interval (MathNet.Numerics as the reference quantile).</summary>
public sealed class NisAccumulatorTests
{
    [Fact]
    public void Mean_interval_and_verdicts()
    {
        var nis = new NisAccumulator();
        Assert.True(double.IsNaN(nis.Mean));
        for (int i = 0; i < 50; i++)
        {
            nis.Add(i < 25 ? 0.5 : 1.5, 1);
        }

        Assert.Equal(50, nis.Count);
        Assert.Equal(50, nis.Dof);
        AssertNear.Equal(1.0, nis.Mean, 1e-15, "mean NIS of 50 values");
        (double lower, double upper) = nis.Interval();

        // Two-sided 95 % interval of the mean of 50 NIS values with 50 degrees of freedom in all: chi-square quantiles / 50
        // (Bar-Shalom, Li and Kirubarajan 2001, NIS test; section from memory), quantiles from MathNet.Numerics.
        AssertNear.Equal(ChiSquared.InvCDF(50, 0.025) / 50, lower, 1e-12, "lower bound");
        AssertNear.Equal(ChiSquared.InvCDF(50, 0.975) / 50, upper, 1e-12, "upper bound");
        Assert.Equal(ConsistencyVerdict.Consistent, nis.Judge());
        Assert.Equal(ConsistencyVerdict.Insufficient, nis.Judge(minimumCount: 51));

        var twoDimensional = new NisAccumulator();
        twoDimensional.Add(4.0, 2);
        twoDimensional.Add(2.0, 2);
        Assert.Equal(4, twoDimensional.Dof);
        AssertNear.Equal(ChiSquared.InvCDF(4, 0.975) / 2, twoDimensional.Interval().Upper, 1e-12, "upper bound, K=2 m=2");

        Assert.Equal(ConsistencyVerdict.TooOptimistic, NisConsistencyTest.Judge(2.0, 50, 50));
        Assert.Equal(ConsistencyVerdict.TooPessimistic, NisConsistencyTest.Judge(0.3, 50, 50));
        Assert.Equal(ConsistencyVerdict.Insufficient, NisConsistencyTest.Judge(1.0, 5, 5));
    }
}
