// Where the service keeps its PostgreSQL data.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Database;

/// <summary>
/// Settings of section <c>Database</c>. With <c>ConnectionStrings:Fusion</c> set, that server is used; otherwise a
/// private PostgreSQL cluster is started under <see cref="DataDirectory"/> and stopped at shutdown.
/// </summary>
public sealed class DatabaseOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Database";

    /// <summary>Folder of the embedded cluster, kept between runs. Default <c>./data/pg</c> (relative to the working folder).</summary>
    [Required]
    public string DataDirectory { get; set; } = "./data/pg";

    /// <summary>
    /// Server settings of the embedded cluster (<c>-c name=value</c> at start). The defaults suit the ingest load of one
    /// machine: <c>shared_buffers</c> 512MB (the server's default, 128MB, does not hold a day's measurement indexes),
    /// <c>max_wal_size</c> 4GB and <c>checkpoint_timeout</c> 15min (fewer checkpoints, so fewer full-page images in the
    /// write-ahead log) and <c>wal_compression</c> on. Durability is untouched: <c>fsync</c> and
    /// <c>synchronous_commit</c> keep their defaults. Set a value here to override one; settings of a server given by
    /// connection string are that server's business.
    /// </summary>
    public Dictionary<string, string> EmbeddedServerSettings { get; set; } = new(StringComparer.Ordinal)
    {
        ["shared_buffers"] = "512MB",
        ["max_wal_size"] = "4GB",
        ["checkpoint_timeout"] = "15min",
        ["wal_compression"] = "on",
    };

    /// <summary>TCP port of the embedded cluster on 127.0.0.1; 0 picks a free port at each start. Default 0.</summary>
    [Range(0, 65535)]
    public int EmbeddedPort { get; set; }

    /// <summary>Schema holding the store (created by the migrations). Default <c>fusion</c>.</summary>
    [Required]
    [RegularExpression("^[a-z_][a-z0-9_]{0,62}$")]
    public string Schema { get; set; } = "fusion";

    /// <summary>Seconds between partition maintenance runs. Default 3600.</summary>
    [Range(1, 86400)]
    public int PartitionMaintenanceIntervalS { get; set; } = 3600;

    /// <summary>Daily partitions kept before today (UTC); measurements older than this are refused. Default 2.</summary>
    [Range(1, 365)]
    public int DaysBack { get; set; } = 2;

    /// <summary>Largest number of pooled connections the service opens, unless the connection string sets one. Default 40.</summary>
    [Range(2, 1000)]
    public int MaxPoolSize { get; set; } = 40;

    /// <summary>
    /// Largest number of pooled connections of the separate pool the history reads use (track, distance, diagnostics,
    /// explain), so that they can never take the connections ingest commits need. With fewer than
    /// <c>HeavyReads:MaxConcurrent</c> x <c>Tracks:ReplayStretches</c> connections, parallel replay stretches wait for one
    /// another. Default 16.
    /// </summary>
    [Range(1, 1000)]
    public int ReadMaxPoolSize { get; set; } = 16;

    /// <summary>
    /// Statement timeout of the history reads' connections, seconds (PostgreSQL <c>statement_timeout</c>): a read running
    /// longer is cancelled and the request answered 503. A 24 h smoothed track reads for about 1-2 s on a 2-core
    /// machine (docs/benchmarks.md). Default 30.
    /// </summary>
    [Range(1, 3600)]
    public int ReadStatementTimeoutS { get; set; } = 30;

    /// <summary>
    /// Whether the history reads' PostgreSQL backends run at the lowest processor weight: on Linux, with the embedded
    /// cluster only (the process's own, or in a history-read process the running service's it attaches to), the autogroup nice of each new backend of their pool is set to 19 (<c>/proc/PID/autogroup</c>; every
    /// backend is a session, and so an autogroup, of its own), so that they take a core only when ingest's backends and
    /// the service leave one (docs/limits-and-keys.md). Needs root or the cluster's owner; refused, it is logged once
    /// and the reads run as before. Default true.
    /// </summary>
    public bool LowReadBackendPriority { get; set; } = true;

    /// <summary>Daily partitions created ahead of today (UTC). Default 3.</summary>
    [Range(1, 30)]
    public int DaysAhead { get; set; } = 3;

    /// <summary>
    /// Seconds a vehicle's ten-minute window of measurement time must go without a commit of this process writing into
    /// it before its chunks are folded into one, when there are at least two and they hold fewer than 100 measurements on
    /// average (a gateway's batches over many vans leave one small chunk per van and commit; docs/storage-cost.md). Late
    /// data into a folded window is folded in again after the same wait. 0 turns folding off. Default 900.
    /// </summary>
    [Range(0, 86400)]
    public int ChunkFoldDelayS { get; set; } = 900;

    /// <summary>Seconds between the passes that fold closed windows (see <see cref="ChunkFoldDelayS"/>). Default 60.</summary>
    [Range(1, 86400)]
    public int ChunkFoldIntervalS { get; set; } = 60;

    /// <summary>Days of measurements and fused states kept before their partitions are dropped. Default 30.</summary>
    [Range(1, 3650)]
    public int RetentionDays { get; set; } = 30;
}
