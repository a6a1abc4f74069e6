// Counters and a latency histogram in Prometheus text format.
using System.Globalization;
using System.Text;

namespace FusionService.Operations;

/// <summary>
/// The service's metrics, written in the Prometheus text exposition format (version 0.0.4): messages ingested by
/// status, measurements gated by the filter, smoothing replays and their stretches, the write-queue depth and a histogram
/// of group-commit latency.
/// </summary>
public sealed class ServiceMetrics
{
    private static readonly double[] LatencyBucketsS = [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5];
    private static readonly double[] LagBucketsS = [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60];
    private readonly long[] _bucketCounts = new long[LatencyBucketsS.Length];
    private readonly Lock _latencyLock = new();
    private long _accepted;
    private long _duplicate;
    private long _rejected;
    private long _gated;
    private long _commits;
    private long _committedRows;
    private double _latencySumS;
    private readonly long[] _lagBucketCounts = new long[LagBucketsS.Length];
    private long _lagCount;
    private double _lagSumS;
    private long _smoothingReplays;
    private long _smoothingStretches;
    private long _smoothingSeamMisses;

    private readonly System.Collections.Concurrent.ConcurrentDictionary<string, long> _rateLimited = new(StringComparer.Ordinal);

    /// <summary>Reads the history reads running now (set by the heavy-read gate).</summary>
    public Func<int> HeavyReadsInFlight { get; set; } = () => 0;

    /// <summary>Reads the history reads refused so far: per fleet limit (429) and process limit (503) (set by the heavy-read gate).</summary>
    public Func<(long Fleet, long Busy)> HeavyReadsRefused { get; set; } = () => (0, 0);

    /// <summary>Counts one request refused by the rate limit set by <paramref name="option"/>.</summary>
    public void CountRateLimited(string option) => _rateLimited.AddOrUpdate(option, 1, (_, n) => n + 1);

    /// <summary>Reads the current depth of the ingest write queue (set by the writer).</summary>
    public Func<int> QueueDepth { get; set; } = () => 0;

    /// <summary>Reads the number of committed batches the track grains are still processing (set by the dispatcher).</summary>
    public Func<int> TracksInFlight { get; set; } = () => 0;

    /// <summary>Reads the rows waiting for the tracks' background writer (set by the dispatcher).</summary>
    public Func<long> TrackWriteQueueRows { get; set; } = () => 0;

    /// <summary>Counts the verdicts of one request.</summary>
    public void CountMessages(int accepted, int duplicate, int rejected)
    {
        Interlocked.Add(ref _accepted, accepted);
        Interlocked.Add(ref _duplicate, duplicate);
        Interlocked.Add(ref _rejected, rejected);
    }

    /// <summary>Counts a measurement rejected by the filter's gate.</summary>
    public void CountGated() => Interlocked.Increment(ref _gated);

    /// <summary>
    /// Counts one smoothing replay (smoothed track or distance request): the stretches it was split into and how many
    /// times a stretch did not end in the stored checkpoint the next one started from (the rest was then replayed again).
    /// </summary>
    public void CountSmoothingReplay(int stretches, int seamMisses)
    {
        Interlocked.Increment(ref _smoothingReplays);
        Interlocked.Add(ref _smoothingStretches, stretches);
        Interlocked.Add(ref _smoothingSeamMisses, seamMisses);
    }

    /// <summary>Stretches replayed by all smoothing replays so far (a replay in one go counts one).</summary>
    public long SmoothingStretches => Interlocked.Read(ref _smoothingStretches);

    /// <summary>Stretches that did not end in the stored checkpoint the next one started from, so far.</summary>
    public long SmoothingSeamMisses => Interlocked.Read(ref _smoothingSeamMisses);

    /// <summary>Records one group commit.</summary>
    public void ObserveCommit(double seconds, int rows)
    {
        lock (_latencyLock)
        {
            _commits++;
            _committedRows += rows;
            _latencySumS += seconds;
            for (int i = 0; i < LatencyBucketsS.Length; i++)
            {
                if (seconds <= LatencyBucketsS[i])
                {
                    _bucketCounts[i]++;
                }
            }
        }
    }

    /// <summary>Records the fused-state lag of one committed batch: commit to processed by its track grains.</summary>
    public void ObserveTrackLag(double seconds)
    {
        lock (_latencyLock)
        {
            _lagCount++;
            _lagSumS += seconds;
            for (int i = 0; i < LagBucketsS.Length; i++)
            {
                if (seconds <= LagBucketsS[i])
                {
                    _lagBucketCounts[i]++;
                }
            }
        }
    }

    /// <summary>The metrics in Prometheus text format.</summary>
    public string Render()
    {
        var c = CultureInfo.InvariantCulture;
        var text = new StringBuilder();
        text.Append("# HELP fusion_ingest_messages_total Telemetry messages received, by verdict.\n");
        text.Append("# TYPE fusion_ingest_messages_total counter\n");
        text.Append(c, $"fusion_ingest_messages_total{{status=\"accepted\"}} {Interlocked.Read(ref _accepted)}\n");
        text.Append(c, $"fusion_ingest_messages_total{{status=\"duplicate\"}} {Interlocked.Read(ref _duplicate)}\n");
        text.Append(c, $"fusion_ingest_messages_total{{status=\"rejected\"}} {Interlocked.Read(ref _rejected)}\n");
        text.Append("# HELP fusion_gated_measurements_total Measurements rejected by the filter's chi-square gate.\n");
        text.Append("# TYPE fusion_gated_measurements_total counter\n");
        text.Append(c, $"fusion_gated_measurements_total {Interlocked.Read(ref _gated)}\n");
        text.Append("# HELP fusion_smoothing_replays_total Smoothed-track and distance replays.\n");
        text.Append("# TYPE fusion_smoothing_replays_total counter\n");
        text.Append(c, $"fusion_smoothing_replays_total {Interlocked.Read(ref _smoothingReplays)}\n");
        text.Append("# HELP fusion_smoothing_stretches_total Stretches those replays were split into (run side by side from stored checkpoints).\n");
        text.Append("# TYPE fusion_smoothing_stretches_total counter\n");
        text.Append(c, $"fusion_smoothing_stretches_total {SmoothingStretches}\n");
        text.Append("# HELP fusion_smoothing_seam_misses_total Stretches that did not end in the next one's checkpoint (too-late data before it); the rest was replayed again.\n");
        text.Append("# TYPE fusion_smoothing_seam_misses_total counter\n");
        text.Append(c, $"fusion_smoothing_seam_misses_total {SmoothingSeamMisses}\n");
        text.Append("# HELP fusion_write_queue_depth Requests waiting for the group-commit writer.\n");
        text.Append("# TYPE fusion_write_queue_depth gauge\n");
        text.Append(c, $"fusion_write_queue_depth {QueueDepth()}\n");
        text.Append("# HELP fusion_track_batches_in_flight Committed batches the track grains are still processing.\n");
        text.Append("# TYPE fusion_track_batches_in_flight gauge\n");
        text.Append(c, $"fusion_track_batches_in_flight {TracksInFlight()}\n");
        text.Append("# HELP fusion_track_write_queue_rows Outcome updates and fused states waiting for the tracks' writer.\n");
        text.Append("# TYPE fusion_track_write_queue_rows gauge\n");
        text.Append(c, $"fusion_track_write_queue_rows {TrackWriteQueueRows()}\n");
        text.Append("# HELP fusion_heavy_reads_in_flight History reads (track, distance, diagnostics, explain) running now.\n");
        text.Append("# TYPE fusion_heavy_reads_in_flight gauge\n");
        text.Append(c, $"fusion_heavy_reads_in_flight {HeavyReadsInFlight()}\n");
        var (refusedFleet, refusedBusy) = HeavyReadsRefused();
        text.Append("# HELP fusion_heavy_reads_refused_total History reads refused: fleet at its limit (429) or every slot taken (503).\n");
        text.Append("# TYPE fusion_heavy_reads_refused_total counter\n");
        text.Append(c, $"fusion_heavy_reads_refused_total{{reason=\"fleet\"}} {refusedFleet}\n");
        text.Append(c, $"fusion_heavy_reads_refused_total{{reason=\"busy\"}} {refusedBusy}\n");
        text.Append("# HELP fusion_rate_limited_total Requests answered 429 by a rate limit, by the option that sets it.\n");
        text.Append("# TYPE fusion_rate_limited_total counter\n");
        foreach (var (option, count) in _rateLimited.OrderBy(p => p.Key, StringComparer.Ordinal))
        {
            text.Append(c, $"fusion_rate_limited_total{{limit=\"{option}\"}} {count}\n");
        }

        lock (_latencyLock)
        {
            text.Append("# HELP fusion_commit_rows_total Rows stored by group commits.\n");
            text.Append("# TYPE fusion_commit_rows_total counter\n");
            text.Append(c, $"fusion_commit_rows_total {_committedRows}\n");
            text.Append("# HELP fusion_commit_latency_seconds Duration of one group commit (COPY and transaction).\n");
            text.Append("# TYPE fusion_commit_latency_seconds histogram\n");
            for (int i = 0; i < LatencyBucketsS.Length; i++)
            {
                text.Append(c, $"fusion_commit_latency_seconds_bucket{{le=\"{LatencyBucketsS[i].ToString("R", c)}\"}} {_bucketCounts[i]}\n");
            }

            text.Append(c, $"fusion_commit_latency_seconds_bucket{{le=\"+Inf\"}} {_commits}\n");
            text.Append(c, $"fusion_commit_latency_seconds_sum {_latencySumS.ToString("R", c)}\n");
            text.Append(c, $"fusion_commit_latency_seconds_count {_commits}\n");
            text.Append("# HELP fusion_track_lag_seconds Fused-state lag: from the commit of a batch until its track grains have processed it.\n");
            text.Append("# TYPE fusion_track_lag_seconds histogram\n");
            for (int i = 0; i < LagBucketsS.Length; i++)
            {
                text.Append(c, $"fusion_track_lag_seconds_bucket{{le=\"{LagBucketsS[i].ToString("R", c)}\"}} {_lagBucketCounts[i]}\n");
            }

            text.Append(c, $"fusion_track_lag_seconds_bucket{{le=\"+Inf\"}} {_lagCount}\n");
            text.Append(c, $"fusion_track_lag_seconds_sum {_lagSumS.ToString("R", c)}\n");
            text.Append(c, $"fusion_track_lag_seconds_count {_lagCount}\n");
        }

        return text.ToString();
    }
}
