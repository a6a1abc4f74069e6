// The load tool's reader of the Prometheus text the service serves (written by the OpenTelemetry exporter;
// the reader lives in tests/FusionService.LoadTools).
using FusionService.LoadTools;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Operations;

public sealed class PrometheusTextTests
{
    private const string Scope = "otel_scope_name=\"FusionService\",otel_scope_version=\"1.0\"";

    [Fact]
    public void Histogram_difference_counts_only_the_observations_between_two_scrapes()
    {
        // Two scrapes in the exporter's layout (labels of its own before "le"): one observation of 0.2 s, then four more
        // of 0.004, 0.004, 0.02 and 0.3 s. Bucket bounds as ServiceMetrics gives fusion.track.lag.
        string before = Histogram(sum: 0.2, (0.1, 0), (0.25, 1), (0.5, 1));
        string after = Histogram(sum: 0.2 + 0.004 + 0.004 + 0.02 + 0.3, (0.005, 2), (0.025, 3), (0.1, 3), (0.25, 4), (0.5, 5));

        var delta = PrometheusText.HistogramDifference(before, after, "fusion_track_lag_seconds");
        Assert.Equal(4, delta.Count);
        AssertNear.Equal(0.082, delta.MeanS, 1e-12, "mean lag, s");

        // 0.005 holds 2 of 4, 0.025 holds 3 of 4, 0.5 holds all.
        Assert.Equal(0.005, delta.QuantileUpperBoundS(0.5));
        Assert.Equal(0.5, delta.QuantileUpperBoundS(0.99));
        Assert.True(double.IsNaN(PrometheusText.HistogramDifference(before, before, "fusion_track_lag_seconds").QuantileUpperBoundS(0.5)));
    }

    [Fact]
    public void Value_adds_up_the_series_that_carry_the_labels_asked_for()
    {
        string text = string.Join('\n',
            "# TYPE fusion_ingest_messages_total counter",
            "fusion_ingest_messages_total{" + Scope + ",fusion_message_kind=\"gnss\",fusion_outcome=\"accepted\"} 8",
            "fusion_ingest_messages_total{" + Scope + ",fusion_message_kind=\"wheel\",fusion_outcome=\"accepted\"} 76",
            "fusion_ingest_messages_total{" + Scope + ",fusion_message_kind=\"wheel\",fusion_outcome=\"duplicate\"} 5",
            "db_client_connection_count{otel_scope_name=\"Npgsql\",db_client_connection_pool_name=\"Options=\\\"-c x=1\\\",y\",db_client_connection_state=\"idle\"} 3",
            "fusion_track_batches_in_flight{" + Scope + "} 0",
            "plain_gauge 2.5");

        Assert.Equal(89, PrometheusText.Value(text, "fusion_ingest_messages_total"));
        Assert.Equal(84, PrometheusText.Value(text, "fusion_ingest_messages_total{fusion_outcome=\"accepted\"}"));
        Assert.Equal(76, PrometheusText.Value(text, "fusion_ingest_messages_total{fusion_outcome=\"accepted\",fusion_message_kind=\"wheel\"}"));
        Assert.True(double.IsNaN(PrometheusText.Value(text, "fusion_ingest_messages_total{fusion_outcome=\"rejected\"}")));
        Assert.Equal(3, PrometheusText.Value(text, "db_client_connection_count{db_client_connection_state=\"idle\"}"));
        Assert.Equal(0, PrometheusText.Value(text, "fusion_track_batches_in_flight"));
        Assert.Equal(2.5, PrometheusText.Value(text, "plain_gauge"));
        Assert.True(double.IsNaN(PrometheusText.Value(text, "fusion_track_batches")));
    }

    private static string Histogram(double sum, params (double UpperS, long Count)[] buckets)
    {
        var lines = new List<string> { "# TYPE fusion_track_lag_seconds histogram" };
        long total = buckets[^1].Count;
        foreach (var (upper, count) in buckets)
        {
            lines.Add("fusion_track_lag_seconds_bucket{" + Scope + ",le=\"" + upper.ToString("R", System.Globalization.CultureInfo.InvariantCulture) + "\"} " + count);
        }

        lines.Add("fusion_track_lag_seconds_bucket{" + Scope + ",le=\"+Inf\"} " + total);
        lines.Add("fusion_track_lag_seconds_sum{" + Scope + "} " + sum.ToString("R", System.Globalization.CultureInfo.InvariantCulture));
        lines.Add("fusion_track_lag_seconds_count{" + Scope + "} " + total);
        return string.Join('\n', lines);
    }
}
