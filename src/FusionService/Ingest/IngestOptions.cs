// Limits and conventions of the telemetry ingest.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Ingest;

/// <summary>Settings of section <c>Ingest</c>.</summary>
public sealed class IngestOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Ingest";

    /// <summary>Largest request body (or WebSocket frame), bytes. Default 4 MiB.</summary>
    [Range(1024, 256 * 1024 * 1024)]
    public int MaxBodyBytes { get; set; } = 4 * 1024 * 1024;

    /// <summary>Most messages in one request or frame. Default 10000.</summary>
    [Range(1, 1_000_000)]
    public int MaxMessages { get; set; } = 10_000;

    /// <summary>How far in the future (by the server clock) a message time may lie, seconds. Default 120.</summary>
    [Range(0, 86400)]
    public double MaxFutureSkewS { get; set; } = 120;

    /// <summary>
    /// User equivalent range error, 1 sigma, metres, multiplied by <c>hdop</c> when a GNSS message gives no
    /// <c>accuracy_m</c>. Default 5 m (a common practice value for single-frequency receivers, not a published constant).
    /// </summary>
    [Range(0.01, 1000)]
    public double HdopUereM { get; set; } = 5.0;

    /// <summary>1-sigma speed accuracy, m/s, assumed when a GNSS message gives speed without <c>speed_accuracy_mps</c>. Default 0.5.</summary>
    [Range(0.001, 100)]
    public double DefaultSpeedAccuracyMps { get; set; } = 0.5;

    /// <summary>Requests (or frames) that may wait for the group-commit writer; more are answered 503. Default 1024.</summary>
    [Range(1, 1_000_000)]
    public int QueueCapacity { get; set; } = 1024;

    /// <summary>
    /// Group-commit loops that take requests from the queue and commit them, each on its own connection, so that one
    /// transaction's round trips and commit overlap the next one's rows. Default 2.
    /// </summary>
    [Range(1, 64)]
    public int CommitWriters { get; set; } = 2;

    /// <summary>How long a writer waits for more requests before committing, milliseconds. Default 3.</summary>
    [Range(0, 1000)]
    public int CommitWindowMs { get; set; } = 3;

    /// <summary>
    /// How long a writer waits for more requests before committing when the first waiting request spreads its rows thinly
    /// over several vehicles (fewer than 100 rows per vehicle on average, as a gateway forwarding a fleet sends),
    /// milliseconds; 0 or anything up to <see cref="CommitWindowMs"/> waits only that. Each commit stores a chunk per
    /// vehicle, so the gateway's next batches, which carry the same vans, are better joined into the same chunks than
    /// given chunks of one or two measurements each (docs/benchmarks.md). Default 25.
    /// </summary>
    [Range(0, 1000)]
    public int MixedCommitWindowMs { get; set; } = 25;

    /// <summary>Most rows in one commit. Default 50000.</summary>
    [Range(1, 10_000_000)]
    public int MaxRowsPerCommit { get; set; } = 50_000;

    /// <summary>
    /// When a request is answered: <see cref="AcknowledgeAfter.Commit"/> (default) or
    /// <see cref="AcknowledgeAfter.Tracking"/> (read-your-writes for the vehicle state).
    /// </summary>
    public AcknowledgeAfter AcknowledgeAfter { get; set; } = AcknowledgeAfter.Commit;

    /// <summary>Committed batches whose track processing may be in flight before new requests wait for it. Default 64.</summary>
    [Range(1, 1_000_000)]
    public int MaxBatchesInTracking { get; set; } = 64;

    /// <summary>Retry-After of a 503, seconds. Default 2.</summary>
    [Range(1, 3600)]
    public int RetryAfterS { get; set; } = 2;
}
