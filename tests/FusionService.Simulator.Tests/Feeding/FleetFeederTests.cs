using System.Diagnostics;
using System.Text;
using FusionService.Simulator.Feeding;
using FusionService.Simulator.Messages;
using FusionService.Simulator.Tests.Fleet;

namespace FusionService.Simulator.Tests.Feeding;

/// <summary>The feeder against a tiny in-test Kestrel server: exact delivery, 503 retries, WebSocket acknowledgements.</summary>
[Collection(FleetCollection.Name)]
public sealed class FleetFeederTests(FleetFixture fixture)
{
    private const string Key = "demo-write-key";

    // The paced part of the pace-start test, seconds (see there).
    private const double PacedSpanS = 2.4;

    // The first 12 uploads of three vans (van-01 .. van-03), in arrival order.
    private IReadOnlyList<IReadOnlyList<TelemetryBatch>> Sample(int vans = 3, int batches = 12) =>
        [.. fixture.Fleet.Vans.Take(vans).Select(v => (IReadOnlyList<TelemetryBatch>)[.. v.BuildBatches().Take(batches)])];

    private static FleetFeederOptions Options(TestIngestServer server, FeedTransport transport) => new()
    {
        BaseUrl = server.BaseUrl,
        ApiKey = Key,
        Transport = transport,
        AccelerationFactor = double.PositiveInfinity,
        MaxConcurrentRequests = 2,
        InitialBackoff = TimeSpan.FromMilliseconds(50),
        ProgressInterval = TimeSpan.FromMilliseconds(50),
    };

    [Fact]
    public async Task Http_delivers_every_batch_exactly_as_sent_and_retries_a_503_after_retry_after()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync(throttleOnce: 1);
        using var http = new HttpClient();
        IReadOnlyList<IReadOnlyList<TelemetryBatch>> vans = Sample();
        var reports = new List<FeedProgress>();
        FeedProgress final = await new FleetFeeder(http, Options(server, FeedTransport.Http)).RunAsync(vans, new SyncProgress(reports));

        TestIngestServer.Post[] posts = [.. server.Posts];
        Assert.All(posts, p => Assert.Equal("Bearer " + Key, p.Authorization));
        Assert.All(posts, p => Assert.Equal("application/x-ndjson", p.ContentType));
        TestIngestServer.Post throttled = Assert.Single(posts, p => p.Status == 503);

        // Per van, the accepted bodies are the batches' NDJSON, byte for byte, in arrival order (retry copies included,
        // as the Uploader made them; nothing else duplicated).
        foreach (IReadOnlyList<TelemetryBatch> van in vans)
        {
            string vehicle = van[0].VehicleId;
            byte[][] accepted = [.. posts.Where(p => p.Status == 200 && VehicleOf(p.Body) == vehicle).Select(p => p.Body)];
            Assert.Equal(van.Select(b => TelemetryJson.ToNdjson(b.Messages)), accepted);
        }

        // The throttled body was sent again, unchanged, no sooner than Retry-After (1 s) later; 10 ms allows for timer rounding.
        string throttledVehicle = VehicleOf(throttled.Body);
        TestIngestServer.Post resent = posts.First(p => p.Status == 200 && p.ArrivedTicks > throttled.ArrivedTicks && VehicleOf(p.Body) == throttledVehicle);
        Assert.Equal(throttled.Body, resent.Body);
        Assert.True(Stopwatch.GetElapsedTime(throttled.ArrivedTicks, resent.ArrivedTicks) >= TimeSpan.FromSeconds(0.99), "retried before Retry-After");

        int messages = vans.Sum(v => v.Sum(b => b.Messages.Count));
        Assert.Equal((3, 3, messages, 36L, 1L, 0L), (final.Vans, final.VansFinished, final.MessagesAcknowledged, final.BatchesAcknowledged, final.Retries, final.Failures));
        Assert.Equal(messages + throttled.Body.Count(b => b == (byte)'\n'), final.MessagesSent);
        Assert.True(reports.Count >= 2, "no periodic progress while waiting for Retry-After");
        Assert.Equal(final, reports[^1]);
        Assert.Contains("vans 3 (3 done)", final.ToSummaryLine(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task WebSocket_sends_numbered_frames_and_waits_for_each_acknowledgement()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync(ackDelay: TimeSpan.FromMilliseconds(40));
        using var http = new HttpClient();
        IReadOnlyList<IReadOnlyList<TelemetryBatch>> vans = Sample(batches: 6);
        FeedProgress final = await new FleetFeeder(http, Options(server, FeedTransport.WebSocket)).RunAsync(vans);

        Assert.Equal(3, server.SocketAuthorizations.Count);
        Assert.All(server.SocketAuthorizations, a => Assert.Equal("Bearer " + Key, a));
        TestIngestServer.Frame[] frames = [.. server.Frames];
        foreach (IGrouping<int, TestIngestServer.Frame> connection in frames.GroupBy(f => f.Connection))
        {
            TestIngestServer.Frame[] ordered = [.. connection.OrderBy(f => f.ArrivedTicks)];
            Assert.Equal(Enumerable.Range(1, 6).Select(i => (long)i), ordered.Select(f => f.Seq));
            string vehicle = TelemetryJson.Deserialize(ordered[0].Messages[0]).Vehicle;
            IReadOnlyList<TelemetryBatch> van = Assert.Single(vans, v => v[0].VehicleId == vehicle);
            Assert.Equal(van.Select(b => b.Messages.Select(TelemetryJson.Serialize).ToArray()), ordered.Select(f => f.Messages));
            for (int i = 1; i < ordered.Length; i++)
            {
                long ackStarted = server.AckStartTicks[(connection.Key, ordered[i - 1].Seq)];
                Assert.True(ordered[i].ArrivedTicks >= ackStarted, $"frame {ordered[i].Seq} arrived before frame {ordered[i - 1].Seq} was acknowledged");
            }
        }

        Assert.Equal(3, frames.Select(f => f.Connection).Distinct().Count());
        Assert.Equal((18L, 0L, 0L), (final.BatchesAcknowledged, final.Retries, final.Failures));
    }

    [Fact]
    public async Task WebSocket_reconnects_and_resends_when_an_acknowledgement_does_not_come()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync(dropFirstAck: true);
        using var http = new HttpClient();
        IReadOnlyList<IReadOnlyList<TelemetryBatch>> vans = Sample(vans: 1, batches: 3);
        FleetFeederOptions options = Options(server, FeedTransport.WebSocket) with { AckTimeout = TimeSpan.FromSeconds(2) };
        FeedProgress final = await new FleetFeeder(http, options).RunAsync(vans);

        TestIngestServer.Frame[] frames = [.. server.Frames.OrderBy(f => f.ArrivedTicks)];
        // Connection 1 carried the unacknowledged frame; connection 2 starts again at seq 1 with the same batch.
        Assert.Equal([(1, 1L), (2, 1L), (2, 2L), (2, 3L)], frames.Select(f => (f.Connection, f.Seq)));
        Assert.Equal(frames[0].Messages, frames[1].Messages);
        Assert.Equal(vans[0].Select(b => b.Messages.Select(TelemetryJson.Serialize).ToArray()), frames.Skip(1).Select(f => f.Messages));
        Assert.Equal((3L, 1L, 0L), (final.BatchesAcknowledged, final.Retries, final.Failures));
    }

    [Fact]
    public async Task Mixed_transport_sends_alternate_vans_over_http_and_websocket()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync();
        using var http = new HttpClient();
        IReadOnlyList<IReadOnlyList<TelemetryBatch>> vans = Sample(vans: 2, batches: 3);
        FeedProgress final = await new FleetFeeder(http, Options(server, FeedTransport.Mixed)).RunAsync(vans);
        Assert.Equal(vans[0].Select(b => TelemetryJson.ToNdjson(b.Messages)), server.Posts.Select(p => p.Body));
        Assert.Equal(
            vans[1].Select(b => b.Messages.Select(TelemetryJson.Serialize).ToArray()),
            server.Frames.OrderBy(f => f.ArrivedTicks).Select(f => f.Messages));
        Assert.Equal((6L, 0L), (final.BatchesAcknowledged, final.Failures));
    }

    [Fact]
    public async Task Batches_are_sent_at_their_scaled_arrival_times()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync();
        using var http = new HttpClient();
        IReadOnlyList<IReadOnlyList<TelemetryBatch>> vans = Sample(vans: 1, batches: 5);
        double spanS = (vans[0][^1].ArrivalTimeUs - vans[0][0].ArrivalTimeUs) / 1e6;
        double factor = spanS / 0.8;
        long startTicks = Stopwatch.GetTimestamp();
        await new FleetFeeder(http, Options(server, FeedTransport.Http) with { AccelerationFactor = factor }).RunAsync(vans);
        TestIngestServer.Post[] posts = [.. server.Posts];
        Assert.Equal(5, posts.Length);
        for (int i = 0; i < posts.Length; i++)
        {
            // Derived: batch i is due (arrival_i - arrival_0) / factor after the feeder starts (the server is in-process, so
            // both sides read the same clock); 10 ms allows for timer rounding. The feeder must never send early.
            double dueS = (vans[0][i].ArrivalTimeUs - vans[0][0].ArrivalTimeUs) / 1e6 / factor;
            double receivedS = Stopwatch.GetElapsedTime(startTicks, posts[i].ArrivedTicks).TotalSeconds;
            Assert.True(receivedS >= dueS - 0.010, $"batch {i} received {receivedS} s after the start, due {dueS} s");
        }

        // The last batch is due 0.8 s after the start by construction.
        Assert.True(Stopwatch.GetElapsedTime(startTicks, posts[^1].ArrivedTicks) >= TimeSpan.FromSeconds(0.79));
    }

    [Fact]
    public async Task Batches_that_arrived_before_the_pace_start_go_at_once_and_later_ones_at_their_times()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync();
        using var http = new HttpClient();
        IReadOnlyList<IReadOnlyList<TelemetryBatch>> vans = Sample(vans: 1, batches: 5);
        long paceFromUs = vans[0][2].ArrivalTimeUs;
        // The paced part spans 2.4 s: a backlog held back by mistake would wait a share of it, and a loaded machine's first
        // post (cold connection and server) must not look like one (with 0.8 s it did once, at load average 12-15).
        double factor = ((vans[0][^1].ArrivalTimeUs - paceFromUs) / 1e6) / PacedSpanS;
        long startTicks = Stopwatch.GetTimestamp();
        await new FleetFeeder(http, Options(server, FeedTransport.Http) with { AccelerationFactor = factor, PaceFromUs = paceFromUs }).RunAsync(vans);
        TestIngestServer.Post[] posts = [.. server.Posts];
        Assert.Equal(5, posts.Length);
        for (int i = 0; i < posts.Length; i++)
        {
            // Derived as in the test above, with the pace start at batch 2: batches 0 to 2 are due at once (negative or zero
            // due times), 3 and 4 at (arrival - pace start) / factor; the last one PacedSpanS after the start by construction.
            double dueS = Math.Max(0, (vans[0][i].ArrivalTimeUs - paceFromUs) / 1e6 / factor);
            double receivedS = Stopwatch.GetElapsedTime(startTicks, posts[i].ArrivedTicks).TotalSeconds;
            Assert.True(receivedS >= dueS - 0.010, $"batch {i} received {receivedS} s after the start, due {dueS} s");
        }

        // The backlog went at once: the third batch well before the fourth is due (a generous bound for a loaded machine).
        double fourthDueS = (vans[0][3].ArrivalTimeUs - paceFromUs) / 1e6 / factor;
        Assert.True(Stopwatch.GetElapsedTime(startTicks, posts[2].ArrivedTicks).TotalSeconds < fourthDueS, "the backlog waited");
        Assert.True(Stopwatch.GetElapsedTime(startTicks, posts[^1].ArrivedTicks) >= TimeSpan.FromSeconds(PacedSpanS - 0.01));
    }

    [Fact]
    public async Task Refused_batches_count_as_failures_without_retries()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync(refuseAll: true);
        using var http = new HttpClient();
        FeedProgress final = await new FleetFeeder(http, Options(server, FeedTransport.Http)).RunAsync(Sample(vans: 2, batches: 3));
        Assert.Equal(6, server.Posts.Count);
        Assert.Equal((0L, 0L, 6L), (final.BatchesAcknowledged, final.Retries, final.Failures));
    }

    [Fact]
    public async Task Cancellation_stops_the_feed_promptly()
    {
        await using TestIngestServer server = await TestIngestServer.StartAsync(postDelay: TimeSpan.FromSeconds(20));
        using var http = new HttpClient();
        using var cts = new CancellationTokenSource(TimeSpan.FromMilliseconds(300));
        var clock = Stopwatch.StartNew();
        await Assert.ThrowsAnyAsync<OperationCanceledException>(() => new FleetFeeder(http, Options(server, FeedTransport.Http)).RunAsync(Sample(), null, cts.Token));
        Assert.True(clock.Elapsed < TimeSpan.FromSeconds(5), $"cancellation took {clock.Elapsed}");
    }

    private static string VehicleOf(byte[] ndjson)
    {
        string first = Encoding.UTF8.GetString(ndjson).Split('\n')[0];
        return TelemetryJson.Deserialize(first).Vehicle;
    }

    // Progress<T> posts to the thread pool; this records reports synchronously, in order.
    private sealed class SyncProgress(List<FeedProgress> reports) : IProgress<FeedProgress>
    {
        public void Report(FeedProgress value)
        {
            lock (reports)
            {
                reports.Add(value);
            }
        }
    }
}
