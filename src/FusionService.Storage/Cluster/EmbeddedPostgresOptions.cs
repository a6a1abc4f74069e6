// Settings of the private PostgreSQL cluster.
namespace FusionService.Storage.Cluster;

/// <summary>Settings for <see cref="EmbeddedPostgres"/>.</summary>
public sealed class EmbeddedPostgresOptions
{
    /// <summary>
    /// Folder holding the cluster. When it has no cluster yet (no <c>PG_VERSION</c> file) it is initialised
    /// with <c>initdb</c>; it must then be empty or absent. Null (the default) makes a throwaway cluster in a
    /// fresh folder under the system temp folder, deleted by <see cref="EmbeddedPostgres.DisposeAsync"/>.
    /// </summary>
    public string? DataDirectory { get; set; }

    /// <summary>
    /// Delete <see cref="DataDirectory"/> on dispose. Null (the default) means: delete only when the folder
    /// was a throwaway one made because <see cref="DataDirectory"/> was null.
    /// </summary>
    public bool? DeleteDataDirectoryOnDispose { get; set; }

    /// <summary>
    /// Trade durability for speed, for throwaway clusters: <c>initdb --no-sync</c> and a server with
    /// <c>fsync</c> and <c>full_page_writes</c> off. Committed data survives a clean stop and a crash of the
    /// server processes (the WAL is still written to the operating system at each commit), not a crash of the
    /// machine. Default false.
    /// </summary>
    public bool NoSync { get; set; }

    /// <summary>
    /// TCP port on 127.0.0.1. 0 (the default) picks a free port at each start.
    /// </summary>
    public int Port { get; set; }

    /// <summary>
    /// Folder with <c>initdb</c> and <c>pg_ctl</c>. Null (the default) looks in
    /// <c>/usr/lib/postgresql/15/bin</c>, then on PATH.
    /// </summary>
    public string? BinDirectory { get; set; }

    /// <summary>Database created when missing and named in <see cref="EmbeddedPostgres.ConnectionString"/>.
    /// Default <c>fusion</c>.</summary>
    public string DatabaseName { get; set; } = "fusion";

    /// <summary>Longest wait for the server to accept connections at start, in seconds. Default 60.</summary>
    public int StartTimeoutSeconds { get; set; } = 60;

    /// <summary>
    /// Server settings passed as <c>-c name=value</c> at start (for example <c>shared_buffers</c> = <c>512MB</c>).
    /// Names are lower-case letters, digits, underscores and dots; values letters, digits, underscores, dots and
    /// hyphens: anything else is refused by <see cref="EmbeddedPostgres.StartAsync"/>. Empty by default (the server's
    /// own defaults).
    /// </summary>
    public IDictionary<string, string> ServerSettings { get; init; } = new Dictionary<string, string>(StringComparer.Ordinal);
}
