using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Tests.Diagnostics;

/// <summary>Windowed NIS statistics and their chi-square interval (MathNet.Numerics as the reference quantile).</summary>
public sealed class InnovationStatisticsTests
{
    [Fact]
    public void Window_mean_interval_and_verdicts()
    {
        var stats = new InnovationStatistics(windowSize: 50);
        for (int i = 0; i < 80; i++)
        {
            stats.Add(SensorKind.WheelSpeed, new MeasurementOutcome(OutcomeKind.Accepted, i < 30 ? 100.0 : 1.0, 1, 10.8, false, 0));
        }

        stats.Add(SensorKind.WheelSpeed, new MeasurementOutcome(OutcomeKind.Gated, 500.0, 1, 10.8, false, 0));
        stats.Add(SensorKind.WheelSpeed, MeasurementOutcome.Of(OutcomeKind.Duplicate));
        InnovationSummary s = stats.Summarize(SensorKind.WheelSpeed);
        Assert.Equal(81, s.Count);
        Assert.Equal(1, s.Gated);
        Assert.Equal(50, s.WindowCount);
        AssertNear.Equal(1.0, s.MeanNis, 1e-15, "mean NIS of the last 50 accepted");
        AssertNear.Equal(ChiSquared.InvCDF(50, 0.025) / 50, s.Lower, 1e-12, "lower bound");
        AssertNear.Equal(ChiSquared.InvCDF(50, 0.975) / 50, s.Upper, 1e-12, "upper bound");
        Assert.Equal(ConsistencyVerdict.Consistent, s.Verdict);

        Assert.Equal(ConsistencyVerdict.TooOptimistic, NisConsistencyTest.Judge(2.0, 50, 50));
        Assert.Equal(ConsistencyVerdict.TooPessimistic, NisConsistencyTest.Judge(0.3, 50, 50));
        Assert.Equal(ConsistencyVerdict.Insufficient, NisConsistencyTest.Judge(1.0, 5, 5));
        Assert.Equal(ConsistencyVerdict.Insufficient, stats.Summarize(SensorKind.Imu).Verdict);
    }
}
