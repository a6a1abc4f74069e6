// Issue 18: the OpenTelemetry metrics served at /metrics and the trace of an ingest request.
using System.Collections.Concurrent;
using System.Diagnostics;
using System.Net;
using FusionService.LoadTools;
using FusionService.Operations;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Operations;

[Collection(ServiceTests.Name)]
public sealed class TelemetryExportTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue18_exporter_serves_aspnetcore_npgsql_runtime_orleans_and_own_instruments_after_ingest()
    {
        var fleet = await fixture.NewFleetAsync();
        // A host of its own: ASP.NET Core's meters belong to their host, and the OpenTelemetry SDK drops a stream of a
        // name when any host's meter of that name is disposed (other tests stop hosts of their own).
        await using var host = new ServiceFactory(fixture.ConnectionString);
        using var admin = fixture.Client(fleet.AdminKey, host);
        using var ingest = fixture.Client(fleet.IngestKey, host);
        string before = await admin.GetStringAsync("/metrics");
        var drive = TelemetryDrive.Create("van-otel", TelemetryDrive.StartUs(TimeSpan.FromMinutes(12)), seed: 181);
        int gnss = drive.Messages.Take(120).Count(m => (string)m.Message["kind"]! == "gnss");
        Assert.Equal(120, (await ingest.IngestOkAsync(drive.Body(0, 120))).Accepted);
        // A batch sent again: every message a duplicate.
        Assert.Equal(120, (await ingest.IngestOkAsync(drive.Body(0, 120))).Duplicate);

        using var response = await admin.GetAsync("/metrics");
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Equal("text/plain", response.Content.Headers.ContentType?.MediaType);
        string after = await response.Content.ReadAsStringAsync();

        // Our own instruments, as the exporter names them (OpenTelemetry's Prometheus naming: dots to underscores,
        // "_total" after a counter, the unit "s" as "_seconds", curly-brace units dropped).
        Assert.Equal(120, Delta(before, after, "fusion_ingest_messages_total{fusion_outcome=\"accepted\"}"));
        Assert.Equal(gnss, Delta(before, after, "fusion_ingest_messages_total{fusion_outcome=\"accepted\",fusion_message_kind=\"gnss\"}"));
        Assert.Equal(120, Delta(before, after, "fusion_ingest_messages_total{fusion_outcome=\"duplicate\"}"));
        Assert.True(Delta(before, after, "fusion_track_measurements_total{fusion_sensor=\"gnss_position\"}") >= gnss, "gnss positions judged");
        Assert.True(Delta(before, after, "fusion_ingest_commit_duration_seconds_count") >= 1, "group commits");
        Assert.True(Delta(before, after, "fusion_ingest_commit_rows_total") >= 120, "committed rows");
        Assert.True(Delta(before, after, "fusion_track_lag_seconds_count") >= 1, "fused-state lag observed");
        Assert.Contains("# TYPE fusion_track_lag_seconds histogram", after, StringComparison.Ordinal);
        foreach (string gauge in new[] { "fusion_ingest_write_queue_depth", "fusion_track_batches_in_flight", "fusion_track_write_queue_rows", "fusion_history_reads_active" })
        {
            Assert.False(double.IsNaN(PrometheusText.Value(after, gauge)), gauge + " is served");
        }

        // The libraries' own: ASP.NET Core (hosting meter, semantic-convention name), Npgsql, Orleans, the runtime.
        Assert.True(PrometheusText.Value(after, "http_server_request_duration_seconds_count") >= 2, "ASP.NET Core request durations");
        Assert.Contains(after.Split('\n'), l => l.StartsWith("db_client_", StringComparison.Ordinal));
        Assert.Contains(after.Split('\n'), l => l.StartsWith("orleans_", StringComparison.Ordinal));
        Assert.Contains(after.Split('\n'), l => l.StartsWith("dotnet_gc_", StringComparison.Ordinal));
    }

    [Fact]
    public async Task Issue18_trace_of_an_ingest_request_holds_its_commit_grain_and_verdict_write_spans()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-trace", TelemetryDrive.StartUs(TimeSpan.FromMinutes(12)), seed: 182);
        var traceId = ActivityTraceId.CreateRandom();
        var stopped = new ConcurrentBag<Activity>();
        using var listener = new ActivityListener
        {
            ShouldListenTo = source => source.Name is FusionTelemetry.Name or "Microsoft.AspNetCore" || source.Name.StartsWith("Microsoft.Orleans", StringComparison.Ordinal),
            Sample = (ref ActivityCreationOptions<ActivityContext> _) => ActivitySamplingResult.AllDataAndRecorded,
            ActivityStopped = a =>
            {
                if (a.TraceId == traceId)
                {
                    stopped.Add(a);
                }
            },
        };
        ActivitySource.AddActivityListener(listener);

        using var ingest = fixture.Client(fleet.IngestKey);
        using var request = new HttpRequestMessage(HttpMethod.Post, "/v1/telemetry")
        {
            Content = new StringContent(drive.Body(0, 40), System.Text.Encoding.UTF8, "application/json"),
        };
        // W3C trace context of a caller (https://www.w3.org/TR/trace-context/): the request joins its trace.
        request.Headers.Add("traceparent", "00-" + traceId.ToHexString() + "-" + ActivitySpanId.CreateRandom().ToHexString() + "-01");
        using var response = await ingest.SendAsync(request);
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        await fixture.Host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);

        // The server span ends once the response is written, a moment after the client has it.
        var waited = Stopwatch.StartNew();
        while (!stopped.Any(s => s.Source.Name == "Microsoft.AspNetCore") && waited.Elapsed < TimeSpan.FromSeconds(10))
        {
            await Task.Delay(20);
        }

        var spans = stopped.ToList();
        var server = Assert.Single(spans, s => s.Source.Name == "Microsoft.AspNetCore");
        var commit = Assert.Single(spans, s => s.OperationName == FusionTelemetry.IngestCommitSpan);
        Assert.Equal(server.SpanId, commit.ParentSpanId);
        Assert.True(commit.GetTagItem("fusion.rows") is int rows && rows >= 40, "the request's rows");
        var handover = Assert.Single(spans, s => s.OperationName == FusionTelemetry.HandoverSpan);
        Assert.Equal(server.SpanId, handover.ParentSpanId);
        Assert.Equal("van-trace", handover.GetTagItem("fusion.vehicle"));
        var process = Assert.Single(spans, s => s.OperationName == FusionTelemetry.TrackProcessSpan);
        // The grain's span hangs below the hand-over, through the Orleans client and server spans of the call.
        Assert.Contains(handover.SpanId, Ancestors(process, spans));
        Assert.Contains(spans, s => s.Source.Name.StartsWith("Microsoft.Orleans", StringComparison.Ordinal) && Ancestors(process, spans).Contains(s.SpanId));
        // A new vehicle's grain judges the batch while it activates (it reads the committed rows), so the write hangs
        // below the Orleans call rather than below the process span; either way below the hand-over.
        var write = Assert.Single(spans, s => s.OperationName == FusionTelemetry.VerdictWriteSpan);
        Assert.Contains(handover.SpanId, Ancestors(write, spans));
        Assert.True((int)write.GetTagItem("fusion.outcomes")! >= 40, "the verdicts of the batch");
    }

    [Fact]
    public async Task Issue18_a_smoothed_track_request_is_one_span_with_a_span_per_stretch()
    {
        // Checkpoints every 30 s of data and four stretches, as in ReplayStretchTests.
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Tracks:HistoryCheckpointSpacingMin"] = "0.5",
            ["Tracks:ReplayStretches"] = "4",
        });
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-otel-smooth";
        var drive = FusionService.Tests.History.HistoryDrive.Create(Vehicle, seed: 6400);
        await drive.IngestAsync(fixture, fleet, host: host);

        var stopped = new ConcurrentBag<Activity>();
        using var listener = new ActivityListener
        {
            ShouldListenTo = source => source.Name == FusionTelemetry.Name,
            Sample = (ref ActivityCreationOptions<ActivityContext> _) => ActivitySamplingResult.AllDataAndRecorded,
            ActivityStopped = stopped.Add,
        };
        ActivitySource.AddActivityListener(listener);
        using var read = fixture.Client(fleet.ReadKey, host);
        await FusionService.Tests.History.HistoryDrive.TrackJsonAsync(read, Vehicle, drive.StartUs, drive.EndUs + 1_000_000, "smoothed");

        var replay = Assert.Single(stopped, s => s.OperationName == FusionTelemetry.SmoothingSpan && (string?)s.GetTagItem("fusion.vehicle") == Vehicle);
        Assert.Equal(4, replay.GetTagItem("fusion.smoothing.stretches"));
        Assert.Equal(0, replay.GetTagItem("fusion.smoothing.seam_misses"));
        Assert.Equal(4, stopped.Count(s => s.OperationName == FusionTelemetry.StretchSpan && s.ParentSpanId == replay.SpanId));
    }

    private static double Delta(string before, string after, string selector)
    {
        double earlier = PrometheusText.Value(before, selector);
        return PrometheusText.Value(after, selector) - (double.IsNaN(earlier) ? 0 : earlier);
    }

    private static List<ActivitySpanId> Ancestors(Activity span, List<Activity> spans)
    {
        var ids = new List<ActivitySpanId>();
        var parent = span.ParentSpanId;
        while (spans.FirstOrDefault(s => s.SpanId == parent) is { } next)
        {
            ids.Add(next.SpanId);
            parent = next.ParentSpanId;
        }

        return ids;
    }
}
