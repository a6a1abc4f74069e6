// The service's own instruments on a System.Diagnostics.Metrics meter (exported by OpenTelemetry).
using System.Diagnostics;
using System.Diagnostics.Metrics;
using System.Text.Json;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using FusionService.Ingest;

namespace FusionService.Operations;

/// <summary>
/// The service's own instruments on the meter <see cref="FusionTelemetry.Name"/>: messages by outcome and kind, the
/// filter's decisions per sensor, resets, carried and isolated measurements, group commits, fused-state lag, queue
/// depths, smoothing replays, history-read admission, rate-limit refusals and webhook deliveries. Names, units and
/// descriptions follow the OpenTelemetry semantic conventions for metrics (dotted lower-case names, UCUM units, counts
/// in curly-brace annotations); the Prometheus exporter turns <c>fusion.ingest.messages</c> into
/// <c>fusion_ingest_messages_total</c> and a histogram in seconds into <c>..._seconds_bucket</c>. Attributes hold no
/// fleet, vehicle or position. The list with units and healthy values is in docs/operations.md.
/// </summary>
public sealed class ServiceMetrics : IDisposable
{
    private static readonly double[] LatencyBucketsS = [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5];
    private static readonly double[] LagBucketsS = [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60];
    private static readonly double[] WebhookBucketsS = [0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30];
    private static readonly string[] MessageKinds = ["gnss", "wheel", "imu", "other"];
    private static readonly string[] MessageOutcomes = ["accepted", "duplicate", "rejected"];

    // One meter for the process, never disposed: the OpenTelemetry SDK merges instruments of one name from several
    // meters into one stream and drops the stream when any of those meters is disposed, which would blank the metrics of
    // a host whenever another host in the same process stopped (the tests host several). The observable gauges add up
    // the live instances (one per host; exactly one in a service process).
    private static readonly Meter Meter = new(FusionTelemetry.Name, FusionTelemetry.Version);
    private static readonly System.Collections.Concurrent.ConcurrentDictionary<ServiceMetrics, bool> Live = new();

    private static readonly Counter<long> Messages = Meter.CreateCounter<long>(
        "fusion.ingest.messages", "{message}", "Telemetry messages received, by outcome (accepted, duplicate, rejected) and message kind (gnss, wheel, imu, other).");

    private static readonly Counter<long> Measurements = Meter.CreateCounter<long>(
        "fusion.track.measurements", "{measurement}", "Measurements judged by the vehicles' tracks (at processing or at a track's activation; late-data replays not again), by sensor and by the decision (accepted, gated, too_late, ...).");

    private static readonly Counter<long> Resets = Meter.CreateCounter<long>(
        "fusion.track.resets", "{reset}", "GNSS fixes that re-initialised a track's position after sustained rejection (ferry, tow truck, long tunnel).");

    private static readonly Counter<long> SetAside = Meter.CreateCounter<long>(
        "fusion.track.set_aside", "{measurement}", "Measurements judged while the vehicle was carried (towed, on a ferry) or while their stream was isolated for disagreeing with the others, by sensor and reason.");

    private static readonly Counter<long> CommitRows = Meter.CreateCounter<long>(
        "fusion.ingest.commit.rows", "{row}", "Measurement rows stored by group commits.");

    private static readonly Histogram<double> CommitDuration = Meter.CreateHistogram(
        "fusion.ingest.commit.duration", "s", "Duration of one group commit (binary COPY and transaction).",
        advice: new InstrumentAdvice<double> { HistogramBucketBoundaries = LatencyBucketsS });

    private static readonly Histogram<double> TrackLag = Meter.CreateHistogram(
        "fusion.track.lag", "s", "Fused-state lag: from the commit of a batch until its vehicles' tracks have processed it.",
        advice: new InstrumentAdvice<double> { HistogramBucketBoundaries = LagBucketsS });

    private static readonly Counter<long> FoldedChunks = Meter.CreateCounter<long>(
        "fusion.store.folded_chunks", "{chunk}", "Small measurement chunks of closed ten-minute windows folded into one chunk per vehicle and window (Database:ChunkFoldDelayS).");

    private static readonly Counter<long> SmoothingReplays = Meter.CreateCounter<long>(
        "fusion.smoothing.replays", "{replay}", "Smoothed-track and distance replays.");

    private static readonly Counter<long> SmoothingStretchCounter = Meter.CreateCounter<long>(
        "fusion.smoothing.stretches", "{stretch}", "Stretches those replays were split into (run side by side from stored checkpoints).");

    private static readonly Counter<long> SmoothingSeamMissCounter = Meter.CreateCounter<long>(
        "fusion.smoothing.seam_misses", "{stretch}", "Stretches that did not end in the next one's checkpoint (too-late data before it); the rest was replayed again.");

    private static readonly Counter<long> RateLimited = Meter.CreateCounter<long>(
        "fusion.rate_limit.refusals", "{request}", "Requests answered 429 by a rate limit, by the option that sets it.");

    private static readonly Counter<long> WebhookAttempts = Meter.CreateCounter<long>(
        "fusion.webhook.deliveries", "{attempt}", "Webhook delivery attempts, by outcome (delivered, failed).");

    private static readonly Counter<long> WebhookDeadLetters = Meter.CreateCounter<long>(
        "fusion.webhook.dead_letters", "{delivery}", "Webhook deliveries given up after the last attempt (dead-lettered).");

    private static readonly Histogram<double> WebhookDuration = Meter.CreateHistogram(
        "fusion.webhook.delivery.duration", "s", "Duration of one webhook delivery attempt (connect, send, bounded read of the answer).",
        advice: new InstrumentAdvice<double> { HistogramBucketBoundaries = WebhookBucketsS });

    private long _smoothingStretches;
    private long _smoothingSeamMisses;

    static ServiceMetrics()
    {
        Meter.CreateObservableUpDownCounter(
            "fusion.ingest.write_queue.depth", () => Live.Keys.Sum(m => (long)m.QueueDepth()), "{request}", "Requests waiting for the group-commit writer.");
        Meter.CreateObservableUpDownCounter(
            "fusion.track.batches_in_flight", () => Live.Keys.Sum(m => (long)m.TracksInFlight()), "{batch}", "Committed batches the track grains are still processing.");
        Meter.CreateObservableUpDownCounter(
            "fusion.track.write_queue.rows", () => Live.Keys.Sum(m => m.TrackWriteQueueRows()), "{row}", "Verdicts and fused states waiting for the tracks' background writer.");
        Meter.CreateObservableUpDownCounter(
            "fusion.history.reads.active", () => Live.Keys.Sum(m => (long)m.HeavyReadsInFlight()), "{read}", "History reads (track, distance, diagnostics, explain) running now.");
        Meter.CreateObservableCounter("fusion.history.reads.refused", ObserveRefused, "{read}", "History reads refused: fleet at its limit (429) or every slot taken (503).");
    }

    /// <summary>Creates the instance of one host (its gauges' sources and its own smoothing counts).</summary>
    public ServiceMetrics() => Live[this] = true;

    /// <summary>Reads the history reads running now (set by the heavy-read gate).</summary>
    public Func<int> HeavyReadsInFlight { get; set; } = () => 0;

    /// <summary>Reads the history reads refused so far: per fleet limit (429) and process limit (503) (set by the heavy-read gate).</summary>
    public Func<(long Fleet, long Busy)> HeavyReadsRefused { get; set; } = () => (0, 0);

    /// <summary>Reads the current depth of the ingest write queue (set by the writer).</summary>
    public Func<int> QueueDepth { get; set; } = () => 0;

    /// <summary>Reads the number of committed batches the track grains are still processing (set by the dispatcher).</summary>
    public Func<int> TracksInFlight { get; set; } = () => 0;

    /// <summary>Reads the rows waiting for the tracks' background writer (set by the dispatcher).</summary>
    public Func<long> TrackWriteQueueRows { get; set; } = () => 0;

    /// <summary>Stretches replayed by all smoothing replays so far (a replay in one go counts one).</summary>
    public long SmoothingStretches => Interlocked.Read(ref _smoothingStretches);

    /// <summary>Stretches that did not end in the stored checkpoint the next one started from, so far.</summary>
    public long SmoothingSeamMisses => Interlocked.Read(ref _smoothingSeamMisses);

    /// <summary>Counts one request refused by the rate limit set by <paramref name="option"/>.</summary>
    public void CountRateLimited(string option) => RateLimited.Add(1, new KeyValuePair<string, object?>("fusion.limit", option));

    /// <summary>
    /// Counts the messages of one ingest request by outcome (from <paramref name="results"/>) and kind (the
    /// <c>kind</c> field of each message when it is gnss, wheel or imu; other otherwise).
    /// </summary>
    public void CountMessages(IReadOnlyList<(JsonElement Message, string? SyntaxError)> messages, IReadOnlyList<IngestMessageResult?> results)
    {
        ArgumentNullException.ThrowIfNull(messages);
        ArgumentNullException.ThrowIfNull(results);
        if (!Messages.Enabled)
        {
            return;
        }

        Span<int> counts = stackalloc int[MessageKinds.Length * MessageOutcomes.Length];
        for (int i = 0; i < results.Count; i++)
        {
            int outcome = results[i]?.Status switch
            {
                "accepted" => 0,
                "duplicate" => 1,
                _ => 2,
            };
            counts[(outcome * MessageKinds.Length) + KindIndex(messages[i])]++;
        }

        for (int i = 0; i < counts.Length; i++)
        {
            if (counts[i] > 0)
            {
                Messages.Add(
                    counts[i],
                    new KeyValuePair<string, object?>("fusion.outcome", MessageOutcomes[i / MessageKinds.Length]),
                    new KeyValuePair<string, object?>("fusion.message.kind", MessageKinds[i % MessageKinds.Length]));
            }
        }
    }

    /// <summary>
    /// Counts the decision a track made on one measurement: by sensor and outcome, a reset, and whether it was judged
    /// while the vehicle was carried or its stream isolated. Decisions taken again when late data made the track replay
    /// (<paramref name="isReplay"/>) are not counted, so each measurement counts once per track activation.
    /// </summary>
    public void CountOutcome(SensorKind sensor, in MeasurementOutcome outcome, bool isReplay)
    {
        if (isReplay || !Measurements.Enabled)
        {
            return;
        }

        string sensorName = SensorName(sensor);
        Measurements.Add(
            1,
            new KeyValuePair<string, object?>("fusion.sensor", sensorName),
            new KeyValuePair<string, object?>("fusion.outcome", OutcomeName(outcome.Kind)));
        if (outcome.Kind == OutcomeKind.TrackReset)
        {
            Resets.Add(1);
        }

        if (outcome.Carried)
        {
            SetAside.Add(1, new KeyValuePair<string, object?>("fusion.sensor", sensorName), new KeyValuePair<string, object?>("fusion.reason", "carried"));
        }

        if (outcome.Isolated)
        {
            SetAside.Add(1, new KeyValuePair<string, object?>("fusion.sensor", sensorName), new KeyValuePair<string, object?>("fusion.reason", "isolated"));
        }
    }

    /// <summary>
    /// Counts one smoothing replay (smoothed track or distance request): the stretches it was split into and how many
    /// times a stretch did not end in the stored checkpoint the next one started from (the rest was then replayed again).
    /// Both are also set on the smoothing span when one is running.
    /// </summary>
    public void CountSmoothingReplay(int stretches, int seamMisses)
    {
        Interlocked.Add(ref _smoothingStretches, stretches);
        Interlocked.Add(ref _smoothingSeamMisses, seamMisses);
        SmoothingReplays.Add(1);
        SmoothingStretchCounter.Add(stretches);
        SmoothingSeamMissCounter.Add(seamMisses);
        if (Activity.Current is { } span && span.Source == FusionTelemetry.Source && span.OperationName == FusionTelemetry.SmoothingSpan)
        {
            span.SetTag("fusion.smoothing.stretches", stretches);
            span.SetTag("fusion.smoothing.seam_misses", seamMisses);
        }
    }

    /// <summary>Records one group commit.</summary>
    public void ObserveCommit(double seconds, int rows)
    {
        CommitDuration.Record(seconds);
        CommitRows.Add(rows);
    }

    /// <summary>Records the fused-state lag of one committed batch: commit to processed by its track grains.</summary>
    public void ObserveTrackLag(double seconds) => TrackLag.Record(seconds);

    /// <summary>Counts the chunks one fold of closed windows folded away.</summary>
    public void CountFold(FusionService.Storage.Measurements.ChunkFoldResult fold) => FoldedChunks.Add(fold.ChunksDeleted);

    /// <summary>
    /// Records one webhook delivery attempt of <paramref name="seconds"/>: delivered or failed, and whether it was the
    /// last attempt (dead-lettered).
    /// </summary>
    public void ObserveWebhookAttempt(double seconds, bool delivered, bool deadLettered)
    {
        var outcome = new KeyValuePair<string, object?>("fusion.outcome", delivered ? "delivered" : "failed");
        WebhookAttempts.Add(1, outcome);
        WebhookDuration.Record(seconds, outcome);
        if (deadLettered)
        {
            WebhookDeadLetters.Add(1);
        }
    }

    /// <inheritdoc />
    public void Dispose() => Live.TryRemove(this, out _);

    /// <summary>The attribute value of a sensor kind.</summary>
    internal static string SensorName(SensorKind sensor) => sensor switch
    {
        SensorKind.GnssPosition => "gnss_position",
        SensorKind.GnssVelocity => "gnss_velocity",
        SensorKind.WheelSpeed => "wheel_speed",
        SensorKind.Imu => "imu",
        _ => "other",
    };

    /// <summary>The attribute value of a track's decision.</summary>
    internal static string OutcomeName(OutcomeKind kind) => kind switch
    {
        OutcomeKind.Accepted => "accepted",
        OutcomeKind.Gated => "gated",
        OutcomeKind.TooLate => "too_late",
        OutcomeKind.Duplicate => "duplicate",
        OutcomeKind.Conflict => "conflict",
        OutcomeKind.Initialising => "initialising",
        OutcomeKind.BeforeStart => "before_start",
        OutcomeKind.TrackReset => "reset",
        OutcomeKind.Unused => "unused",
        OutcomeKind.Unusable => "unusable",
        _ => "other",
    };

    private static int KindIndex((JsonElement Message, string? SyntaxError) message)
    {
        if (message.SyntaxError is not null
            || message.Message.ValueKind != JsonValueKind.Object
            || !message.Message.TryGetProperty("kind", out var kind)
            || kind.ValueKind != JsonValueKind.String)
        {
            return 3;
        }

        try
        {
            return kind.ValueEquals("gnss") ? 0 : kind.ValueEquals("wheel") ? 1 : kind.ValueEquals("imu") ? 2 : 3;
        }
        catch (InvalidOperationException)
        {
            // A string the reader cannot unescape (a lone UTF-16 surrogate): the parser has rejected the message already.
            return 3;
        }
    }

    private static IEnumerable<Measurement<long>> ObserveRefused()
    {
        long fleet = 0, busy = 0;
        foreach (var metrics in Live.Keys)
        {
            var refused = metrics.HeavyReadsRefused();
            fleet += refused.Fleet;
            busy += refused.Busy;
        }

        return
        [
            new Measurement<long>(fleet, new KeyValuePair<string, object?>("fusion.reason", "fleet")),
            new Measurement<long>(busy, new KeyValuePair<string, object?>("fusion.reason", "busy")),
        ];
    }
}
