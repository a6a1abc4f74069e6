// The service's PostgreSQL store: embedded or external server, migrated and partitioned at start-up.
using FusionService.Storage.Cluster;
using FusionService.Storage.Migrations;
using FusionService.Storage.Partitions;
using FusionService.Storage.Schemas;
using Microsoft.Extensions.Options;
using Npgsql;

namespace FusionService.Database;

/// <summary>
/// Owns the connection to the store. <see cref="StartAsync(CancellationToken)"/> starts the embedded cluster when no connection
/// string is configured, applies the migrations and creates the daily partitions; <see cref="StopAsync"/> stops
/// the embedded cluster.
/// </summary>
public sealed class FusionDatabase : IAsyncDisposable
{
    /// <summary>Name of the connection string that points the service at an existing server.</summary>
    public const string ConnectionStringName = "Fusion";

    private readonly IConfiguration _configuration;
    private readonly DatabaseOptions _options;
    private readonly ILoggerFactory _loggerFactory;
    private readonly ILogger<FusionDatabase> _logger;
    private EmbeddedPostgres? _embedded;
    private bool _attachedToEmbedded;
    private NpgsqlDataSource? _dataSource;
    private NpgsqlDataSource? _readDataSource;
    private int _down;
    private long _downSince;
    private long _failuresWhileDown;
    private int _backendPriorityReported;

    /// <summary>Creates the (not yet started) store.</summary>
    public FusionDatabase(IConfiguration configuration, IOptions<DatabaseOptions> options, ILoggerFactory loggerFactory)
    {
        _configuration = configuration;
        _options = options.Value;
        _loggerFactory = loggerFactory;
        _logger = loggerFactory.CreateLogger<FusionDatabase>();
    }

    /// <summary>Data source whose connections use the store's schema.</summary>
    /// <exception cref="InvalidOperationException">Before <see cref="StartAsync(CancellationToken)"/>.</exception>
    public NpgsqlDataSource DataSource => _dataSource ?? throw new InvalidOperationException("The database has not been started.");

    /// <summary>
    /// Data source of the history reads: a pool of its own (<see cref="DatabaseOptions.ReadMaxPoolSize"/>) whose
    /// connections carry the statement timeout <see cref="DatabaseOptions.ReadStatementTimeoutS"/>, so that heavy reads
    /// never hold the connections of the ingest commits.
    /// </summary>
    /// <exception cref="InvalidOperationException">Before <see cref="StartAsync(CancellationToken)"/>.</exception>
    public NpgsqlDataSource ReadDataSource => _readDataSource ?? throw new InvalidOperationException("The database has not been started.");

    /// <summary>Server connection string (without the schema search path).</summary>
    public string ServerConnectionString { get; private set; } = string.Empty;

    /// <summary>Versions of the migrations the store must have.</summary>
    public static IReadOnlyList<string> RequiredMigrations => new MigrationRunner("Host=unused").Versions;

    /// <summary>Options in force.</summary>
    public DatabaseOptions Options => _options;

    /// <summary>Starts (or connects to) the server, migrates the schema and creates partitions.</summary>
    public Task StartAsync(CancellationToken cancellationToken) => StartAsync(attachToRunningEmbedded: false, cancellationToken);

    /// <summary>
    /// Like <see cref="StartAsync(CancellationToken)"/>; with <paramref name="attachToRunningEmbedded"/>, an embedded
    /// cluster already running on <see cref="DatabaseOptions.DataDirectory"/> (a running service) is used instead of
    /// starting one (its port is read from <c>postmaster.pid</c>), and it is left running afterwards.
    /// </summary>
    public Task StartAsync(bool attachToRunningEmbedded, CancellationToken cancellationToken) =>
        StartAsync(attachToRunningEmbedded, requireRunning: false, cancellationToken);

    /// <summary>
    /// Connects to the server of <c>ConnectionStrings:Fusion</c> or, without one, to the embedded cluster a running
    /// service keeps on <see cref="DatabaseOptions.DataDirectory"/> (a history-read process); never starts a server.
    /// </summary>
    /// <exception cref="InvalidOperationException">Without a connection string, when no server runs on the data directory.</exception>
    public Task AttachAsync(CancellationToken cancellationToken) =>
        StartAsync(attachToRunningEmbedded: true, requireRunning: true, cancellationToken);

    private async Task StartAsync(bool attachToRunningEmbedded, bool requireRunning, CancellationToken cancellationToken)
    {
        var external = _configuration.GetConnectionString(ConnectionStringName);
        if (string.IsNullOrWhiteSpace(external) && requireRunning
            && RunningEmbeddedPort(Path.GetFullPath(_options.DataDirectory)) is null)
        {
            throw new InvalidOperationException(
                $"No PostgreSQL server runs on Database:DataDirectory ({Path.GetFullPath(_options.DataDirectory)}) and "
                + "ConnectionStrings:Fusion is not set: a history-read process (Service:Role=HistoryReads) reads the store of "
                + "running service processes and never starts one of its own. Start the service first, or name its server.");
        }

        if (string.IsNullOrWhiteSpace(external) && attachToRunningEmbedded
            && RunningEmbeddedPort(Path.GetFullPath(_options.DataDirectory)) is int port)
        {
            _attachedToEmbedded = true;
            external = new NpgsqlConnectionStringBuilder
            {
                Host = System.Net.IPAddress.Loopback.ToString(),
                Port = port,
                Username = "postgres",
                Database = new EmbeddedPostgresOptions().DatabaseName,
            }.ConnectionString;
        }

        if (string.IsNullOrWhiteSpace(external))
        {
            var folder = Path.GetFullPath(_options.DataDirectory);
            _logger.LogInformation("Starting the embedded PostgreSQL cluster in {DataDirectory}", folder);
            _embedded = await EmbeddedPostgres.StartAsync(
                new EmbeddedPostgresOptions
                {
                    DataDirectory = folder,
                    DeleteDataDirectoryOnDispose = false,
                    Port = _options.EmbeddedPort,
                    ServerSettings = _options.EmbeddedServerSettings,
                },
                _loggerFactory.CreateLogger<EmbeddedPostgres>(),
                cancellationToken).ConfigureAwait(false);
            ServerConnectionString = _embedded.ConnectionString;
        }
        else
        {
            ServerConnectionString = external;
        }

        var applied = await new MigrationRunner(ServerConnectionString, _options.Schema, _loggerFactory.CreateLogger<MigrationRunner>())
            .RunAsync(cancellationToken).ConfigureAwait(false);
        _logger.LogInformation("Store schema {Schema} ready; {Count} migrations applied now", _options.Schema, applied.Count);
        // Bound the pool below the server's connection limit (100 by default): a burst of track activations must wait
        // for a connection, never be refused one. An explicit "Maximum Pool Size" in the connection string wins.
        var pooled = new NpgsqlConnectionStringBuilder(StorageSchema.WithSearchPath(ServerConnectionString, _options.Schema));
        var given = new System.Data.Common.DbConnectionStringBuilder { ConnectionString = ServerConnectionString };
        if (!given.ContainsKey("Maximum Pool Size") && !given.ContainsKey("Max Pool Size") && !given.ContainsKey("MaxPoolSize"))
        {
            pooled.MaxPoolSize = _options.MaxPoolSize;
        }

        _dataSource = NpgsqlDataSource.Create(pooled.ConnectionString);
        var reads = new NpgsqlConnectionStringBuilder(StorageSchema.WithSearchPath(ServerConnectionString, _options.Schema))
        {
            MaxPoolSize = _options.ReadMaxPoolSize,
            ApplicationName = "fusion-history-reads",
        };
        reads.Options = (string.IsNullOrEmpty(reads.Options) ? string.Empty : reads.Options + " ")
            + "-c statement_timeout=" + (_options.ReadStatementTimeoutS * 1000).ToString(System.Globalization.CultureInfo.InvariantCulture);
        var readBuilder = new NpgsqlDataSourceBuilder(reads.ConnectionString);
        if (_options.LowReadBackendPriority && (_embedded is not null || _attachedToEmbedded) && OperatingSystem.IsLinux()
            && PostmasterPid(Path.GetFullPath(_options.DataDirectory)) is int postmaster)
        {
            // Each new physical connection's backend gets the lowest weight of its own autogroup (BackendPriority).
            readBuilder.UsePhysicalConnectionInitializer(
                connection => LowerReadBackend(connection.ProcessID, postmaster),
                connection =>
                {
                    LowerReadBackend(connection.ProcessID, postmaster);
                    return Task.CompletedTask;
                });
        }

        _readDataSource = readBuilder.Build();
        await CreatePartitions().RunAsync(cancellationToken).ConfigureAwait(false);
    }

    /// <summary>Lowers a history-read backend's weight (<see cref="BackendPriority"/>); a refusal is logged once.</summary>
    private void LowerReadBackend(int pid, int postmasterPid)
    {
        try
        {
            if (!BackendPriority.Lower(pid, postmasterPid) && Interlocked.Exchange(ref _backendPriorityReported, 1) == 0)
            {
                _logger.LogWarning("History reads: backend {Pid} is not a session of the embedded cluster's postmaster {Postmaster}; its priority is left as it is", pid, postmasterPid);
            }
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            if (Interlocked.Exchange(ref _backendPriorityReported, 1) == 0)
            {
                _logger.LogWarning("History reads: the system refused to lower their PostgreSQL backends' priority ({Reason}); they run at normal priority", e.Message);
            }
        }
    }

    /// <summary>The port of a live server on <paramref name="dataDirectory"/>, from its <c>postmaster.pid</c>, or null.</summary>
    private static int? RunningEmbeddedPort(string dataDirectory)
    {
        if (ReadPostmasterPidFile(dataDirectory) is not { } postmaster)
        {
            return null;
        }

        try
        {
            using var process = System.Diagnostics.Process.GetProcessById(postmaster.Pid);
            return process.HasExited ? null : postmaster.Port;
        }
        catch (ArgumentException)
        {
            return null;
        }
    }

    /// <summary>The postmaster's PID from <c>postmaster.pid</c> in <paramref name="dataDirectory"/>, or null.</summary>
    private static int? PostmasterPid(string dataDirectory) => ReadPostmasterPidFile(dataDirectory)?.Pid;

    /// <summary>
    /// Line 1 (the postmaster's PID) and line 4 (its port) of <c>postmaster.pid</c> in <paramref name="dataDirectory"/>
    /// (PostgreSQL documentation, "Database File Layout"), or null when the file is missing or short.
    /// </summary>
    private static (int Pid, int Port)? ReadPostmasterPidFile(string dataDirectory)
    {
        string[] lines;
        try
        {
            lines = File.ReadAllLines(Path.Combine(dataDirectory, "postmaster.pid"));
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            return null;
        }

        return lines.Length >= 4
            && int.TryParse(lines[0], System.Globalization.NumberStyles.Integer, System.Globalization.CultureInfo.InvariantCulture, out int pid)
            && int.TryParse(lines[3], System.Globalization.NumberStyles.Integer, System.Globalization.CultureInfo.InvariantCulture, out int port)
            ? (pid, port)
            : null;
    }

    /// <summary>A partition maintainer for the store with the configured window.</summary>
    public PartitionMaintainer CreatePartitions() => new(
        DataSource,
        new PartitionMaintenanceOptions { DaysBack = _options.DaysBack, DaysAhead = _options.DaysAhead, RetentionDays = _options.RetentionDays },
        TimeProvider.System,
        _loggerFactory.CreateLogger<PartitionMaintainer>());

    /// <summary>
    /// Call when a database operation failed: after a connection-level failure (server restarted, network cut) the
    /// pooled idle connections are dead too, so the pool is cleared and the next attempt opens fresh ones. The first
    /// connection-level failure after the store last answered logs one warning (the reason, no stack trace); further
    /// failures log nothing until <see cref="NoteSuccess"/> logs that it answers again: one line per state change.
    /// </summary>
    /// <returns>True when the failure was connection-level (the outage is logged here; callers need not log it).</returns>
    public bool NoteFailure(Exception exception)
    {
        ArgumentNullException.ThrowIfNull(exception);
        bool connectionLevel = exception switch
        {
            PostgresException pg => pg.SqlState.StartsWith("08", StringComparison.Ordinal) || pg.SqlState.StartsWith("57P", StringComparison.Ordinal),
            NpgsqlException => true,
            _ => exception.InnerException is { } inner && inner is NpgsqlException,
        };
        if (connectionLevel)
        {
            _dataSource?.Clear();
            _readDataSource?.Clear();
            Interlocked.Increment(ref _failuresWhileDown);
            if (Interlocked.CompareExchange(ref _down, 1, 0) == 0)
            {
                _downSince = System.Diagnostics.Stopwatch.GetTimestamp();
                Interlocked.Exchange(ref _failuresWhileDown, 1);
                _logger.LogWarning(
                    "The database is unavailable ({Reason}); requests that need it are answered 503 and background writes retry. The next line comes when it answers again",
                    exception.GetBaseException().Message);
            }
        }

        return connectionLevel;
    }

    /// <summary>Call when a database operation succeeded: ends an outage noted by <see cref="NoteFailure"/> with one log line.</summary>
    public void NoteSuccess()
    {
        if (Volatile.Read(ref _down) == 1 && Interlocked.Exchange(ref _down, 0) == 1)
        {
            _logger.LogInformation(
                "The database answers again after {DownS:F1} s ({Failures} failed operations meanwhile)",
                System.Diagnostics.Stopwatch.GetElapsedTime(_downSince).TotalSeconds,
                Interlocked.Read(ref _failuresWhileDown));
        }
    }

    /// <summary>True between a connection-level failure and the next success.</summary>
    public bool IsDown => Volatile.Read(ref _down) == 1;

    /// <summary>Closes the data source and stops the embedded cluster (if this store started one).</summary>
    public async Task StopAsync(CancellationToken cancellationToken)
    {
        if (_dataSource is not null)
        {
            await _dataSource.DisposeAsync().ConfigureAwait(false);
            _dataSource = null;
        }

        if (_readDataSource is not null)
        {
            await _readDataSource.DisposeAsync().ConfigureAwait(false);
            _readDataSource = null;
        }

        if (_embedded is not null)
        {
            // The cluster must stop even when the host's shutdown budget is spent: a fast stop takes well under a
            // second, and a server left running would outlive the service.
            _ = cancellationToken;
            await _embedded.StopAsync(CancellationToken.None).ConfigureAwait(false);
            await _embedded.DisposeAsync().ConfigureAwait(false);
            _embedded = null;
        }
    }

    /// <inheritdoc />
    public async ValueTask DisposeAsync() => await StopAsync(CancellationToken.None).ConfigureAwait(false);
}
