// The load tool's reader of the service's own Prometheus text (tests/FusionService.LoadTools).
using FusionService.LoadTools;
using FusionService.Operations;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Operations;

public sealed class PrometheusTextTests
{
    [Fact]
    public void Histogram_difference_counts_only_the_observations_between_two_scrapes()
    {
        var metrics = new ServiceMetrics();
        metrics.ObserveTrackLag(0.2);
        string before = metrics.Render();
        foreach (double s in new[] { 0.004, 0.004, 0.02, 0.3 })
        {
            metrics.ObserveTrackLag(s);
        }

        var delta = PrometheusText.HistogramDifference(before, metrics.Render(), "fusion_track_lag_seconds");
        Assert.Equal(4, delta.Count);
        AssertNear.Equal(0.082, delta.MeanS, 1e-12, "mean lag, s");

        // Bucket bounds of ServiceMetrics: 0.005 holds 2 of 4, 0.025 holds 3 of 4, 0.5 holds all.
        Assert.Equal(0.005, delta.QuantileUpperBoundS(0.5));
        Assert.Equal(0.5, delta.QuantileUpperBoundS(0.99));
        Assert.True(double.IsNaN(PrometheusText.HistogramDifference(before, before, "fusion_track_lag_seconds").QuantileUpperBoundS(0.5)));
    }
}
