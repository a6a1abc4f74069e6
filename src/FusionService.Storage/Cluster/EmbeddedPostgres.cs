// A private PostgreSQL cluster started from the machine's binaries, for development, tests and small installs.
using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Sockets;
using FusionService.Storage.Logging;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Logging.Abstractions;
using Npgsql;

namespace FusionService.Storage.Cluster;

/// <summary>
/// Starts and stops a private PostgreSQL cluster (tested with PostgreSQL 15) from the machine's server binaries,
/// listening on 127.0.0.1 only, with trust authentication for the <c>postgres</c> superuser.
/// </summary>
/// <remarks>
/// <para>The server is a daemon that outlives this process unless stopped: always <see cref="DisposeAsync"/> or
/// <see cref="StopAsync"/>. As a last resort a process-exit handler stops it in immediate mode.</para>
/// <para>When the caller is root, folders are given to the <c>postgres</c> account and every tool runs through
/// <c>runuser -u postgres --</c>, because <c>initdb</c> and <c>postgres</c> refuse to run as root.</para>
/// <para>A <c>postmaster.pid</c> left by a crashed run is removed when no server uses the data directory any
/// more, including the case where its PID now belongs to an unrelated process (PostgreSQL itself would refuse to
/// start then).</para>
/// <para>The process that started the server records itself (PID and start time) in <c>fusion-owner.pid</c> in the
/// data directory. A server found running at start whose owner is gone (the owner was killed, so nothing stopped
/// the server) is stopped with <c>pg_ctl stop -m fast</c> and a new one is started: never two servers on one data
/// directory. A server whose owner lives, or whose owner is not recorded, is left alone and the start refused.</para>
/// </remarks>
public sealed class EmbeddedPostgres : IAsyncDisposable
{
    private const string SuperUser = "postgres";

    /// <summary>The file in the data directory naming the process that started the running server.</summary>
    public const string OwnerFileName = "fusion-owner.pid";
    private const int MaxPortAttempts = 3;
    private static readonly TimeSpan ToolTimeout = TimeSpan.FromSeconds(120);

    private readonly PostgresBinaries _binaries;
    private readonly ServiceAccount _account;
    private readonly ILogger _logger;
    private readonly bool _deleteDataDirectory;
    private readonly string _socketDirectory;
    private readonly SemaphoreSlim _lifecycle = new(1, 1);
    private bool _running;
    private bool _disposed;

    private EmbeddedPostgres(
        PostgresBinaries binaries,
        ServiceAccount account,
        ILogger logger,
        string dataDirectory,
        bool deleteDataDirectory,
        string socketDirectory,
        int port,
        string databaseName)
    {
        _binaries = binaries;
        _account = account;
        _logger = logger;
        DataDirectory = dataDirectory;
        _deleteDataDirectory = deleteDataDirectory;
        _socketDirectory = socketDirectory;
        Port = port;
        DatabaseName = databaseName;
        ConnectionString = new NpgsqlConnectionStringBuilder
        {
            Host = IPAddress.Loopback.ToString(),
            Port = port,
            Username = SuperUser,
            Database = databaseName,
            Pooling = true,
        }.ConnectionString;
    }

    /// <summary>Absolute path of the cluster's data directory.</summary>
    public string DataDirectory { get; }

    /// <summary>TCP port the server listens on, on 127.0.0.1.</summary>
    public int Port { get; }

    /// <summary>Name of the application database (created when missing).</summary>
    public string DatabaseName { get; }

    /// <summary>Npgsql connection string: host 127.0.0.1, <see cref="Port"/>, user <c>postgres</c>,
    /// database <see cref="DatabaseName"/>, pooling on.</summary>
    public string ConnectionString { get; }

    /// <summary>True between a successful start and <see cref="StopAsync"/>.</summary>
    public bool IsRunning => _running;

    /// <summary>
    /// Initialises the data directory when it holds no cluster, starts the server on a free loopback port (or
    /// <see cref="EmbeddedPostgresOptions.Port"/>), and creates the application database when missing.
    /// </summary>
    /// <param name="options">Settings; null for a throwaway cluster with defaults.</param>
    /// <param name="logger">Receives progress messages; null for none.</param>
    /// <param name="cancellationToken">Cancels the start (a half-started server is stopped).</param>
    /// <returns>The running cluster; dispose it to stop the server.</returns>
    /// <exception cref="EmbeddedPostgresException">Binaries missing, <c>initdb</c> or <c>pg_ctl</c> failed (the
    /// message quotes their output and the end of the server log), or a server already runs on the data
    /// directory.</exception>
    public static async Task<EmbeddedPostgres> StartAsync(
        EmbeddedPostgresOptions? options = null,
        ILogger? logger = null,
        CancellationToken cancellationToken = default)
    {
        options ??= new EmbeddedPostgresOptions();
        logger ??= NullLogger.Instance;
        if (options.Port is < 0 or > 65535)
        {
            throw new ArgumentOutOfRangeException(nameof(options), options.Port, "Port must be 0 (pick a free one) or 1-65535.");
        }

        foreach (var (name, value) in options.ServerSettings)
        {
            if (!IsSettingName(name) || !IsSettingValue(value))
            {
                throw new ArgumentException(
                    $"Server setting '{name}' = '{value}' is refused: names are lower-case letters, digits, '_' and '.', values letters, digits, '_', '.' and '-'.",
                    nameof(options));
            }
        }

        var binaries = PostgresBinaries.Locate(options.BinDirectory);
        var account = ServiceAccount.Detect();
        var throwaway = options.DataDirectory is null;
        var dataDirectory = Path.GetFullPath(options.DataDirectory ?? Path.Combine(Path.GetTempPath(), "fusion-pg-" + RandomSuffix()));
        var deleteDataDirectory = options.DeleteDataDirectoryOnDispose ?? throwaway;

        // Unix socket paths are limited to about 107 bytes, so the socket folder stays short and separate.
        var socketDirectory = Path.Combine(Path.GetTempPath(), "fusion-pgs-" + RandomSuffix());
        await account.PrepareFolderAsync(socketDirectory, cancellationToken).ConfigureAwait(false);

        try
        {
            if (!File.Exists(Path.Combine(dataDirectory, "PG_VERSION")))
            {
                await InitialiseAsync(binaries, account, logger, dataDirectory, options.NoSync, cancellationToken).ConfigureAwait(false);
            }

            await RecoverStalePidFileAsync(binaries, account, logger, dataDirectory, cancellationToken).ConfigureAwait(false);

            for (var attempt = 1; ; attempt++)
            {
                var port = options.Port != 0 ? options.Port : FreeLoopbackPort();
                var cluster = new EmbeddedPostgres(
                    binaries, account, logger, dataDirectory, deleteDataDirectory, socketDirectory, port, options.DatabaseName);
                var started = await cluster.TryStartServerAsync(options, cancellationToken).ConfigureAwait(false);
                if (started is null)
                {
                    WriteOwner(dataDirectory);
                    await cluster.EnsureDatabaseAsync(cancellationToken).ConfigureAwait(false);
                    return cluster;
                }

                if (options.Port == 0 && attempt < MaxPortAttempts && started.Value.PortTaken)
                {
                    StorageLog.PortTaken(logger, port);
                    continue;
                }

                throw new EmbeddedPostgresException(started.Value.Message);
            }
        }
        catch (Exception)
        {
            TryDelete(socketDirectory);
            if (throwaway)
            {
                TryDelete(dataDirectory);
            }

            throw;
        }
    }

    /// <summary>Stops the server with <c>pg_ctl -m fast stop</c> (open sessions are ended, data is flushed).
    /// Does nothing when it is not running.</summary>
    /// <param name="cancellationToken">Cancels the wait (the server may still stop).</param>
    /// <exception cref="EmbeddedPostgresException">pg_ctl failed and the server still runs.</exception>
    public async Task StopAsync(CancellationToken cancellationToken = default)
    {
        await _lifecycle.WaitAsync(cancellationToken).ConfigureAwait(false);
        try
        {
            if (!_running)
            {
                return;
            }

            using (var connection = new NpgsqlConnection(ConnectionString))
            {
                NpgsqlConnection.ClearPool(connection);
            }

            var stop = await PgCtlAsync(["stop", "-D", DataDirectory, "-m", "fast", "-w"], cancellationToken).ConfigureAwait(false);
            if (stop.ExitCode != 0)
            {
                var status = await PgCtlAsync(["status", "-D", DataDirectory], cancellationToken).ConfigureAwait(false);
                if (status.ExitCode == 0)
                {
                    throw new EmbeddedPostgresException(string.Create(
                        CultureInfo.InvariantCulture,
                        $"pg_ctl stop failed for '{DataDirectory}' and the server still runs: {stop.Diagnostics}"));
                }
            }

            _running = false;
            AppDomain.CurrentDomain.ProcessExit -= OnProcessExit;
            TryDeleteFile(Path.Combine(DataDirectory, OwnerFileName));
            TryDelete(_socketDirectory);
            StorageLog.ClusterStopped(_logger, DataDirectory);
        }
        finally
        {
            _lifecycle.Release();
        }
    }

    /// <summary>Stops the server, then deletes the data directory if it was a throwaway one (or
    /// <see cref="EmbeddedPostgresOptions.DeleteDataDirectoryOnDispose"/> asked for it).</summary>
    public async ValueTask DisposeAsync()
    {
        if (_disposed)
        {
            return;
        }

        try
        {
            await StopAsync().ConfigureAwait(false);
        }
        finally
        {
            _disposed = true;
            if (_deleteDataDirectory && !_running)
            {
                TryDelete(DataDirectory);
            }

            _lifecycle.Dispose();
        }
    }

    private static async Task InitialiseAsync(
        PostgresBinaries binaries,
        ServiceAccount account,
        ILogger logger,
        string dataDirectory,
        bool noSync,
        CancellationToken cancellationToken)
    {
        var clock = Stopwatch.StartNew();
        await account.PrepareFolderAsync(dataDirectory, cancellationToken).ConfigureAwait(false);
        List<string> arguments =
            ["-D", dataDirectory, "-U", SuperUser, "-A", "trust", "-E", "UTF8", "--locale=C.UTF-8"];
        if (noSync)
        {
            arguments.Add("--no-sync");
        }

        var result = await ProcessRunner.RunAsync(account, binaries.InitDb, arguments, ToolTimeout, cancellationToken)
            .ConfigureAwait(false);
        if (result.ExitCode != 0)
        {
            throw new EmbeddedPostgresException(string.Create(
                CultureInfo.InvariantCulture,
                $"initdb failed (exit code {result.ExitCode}) for data directory '{dataDirectory}': {result.Diagnostics}"));
        }

        StorageLog.ClusterInitialised(logger, dataDirectory, clock.ElapsedMilliseconds);
    }

    private static async Task RecoverStalePidFileAsync(
        PostgresBinaries binaries,
        ServiceAccount account,
        ILogger logger,
        string dataDirectory,
        CancellationToken cancellationToken)
    {
        var pidFile = Path.Combine(dataDirectory, "postmaster.pid");
        if (!File.Exists(pidFile))
        {
            return;
        }

        var pid = ReadPid(pidFile);
        var status = await ProcessRunner.RunAsync(
            account, binaries.PgCtl, ["status", "-D", dataDirectory], ToolTimeout, cancellationToken).ConfigureAwait(false);

        // pg_ctl status: 0 = a process with the recorded PID is alive, 3 = not running, 4 = no data directory.
        // A live PID may have been reused by an unrelated process after a crash (common in containers, where
        // PIDs are small), so "alive" is confirmed by looking at the process's working directory.
        var users = ProcFs.ProcessesWorkingIn(dataDirectory);
        if (status.ExitCode == 0 && pid is int orphan && users.Contains(orphan)
            && ProcFs.CommandName(orphan) is "postgres" && DeadOwner(dataDirectory) is int deadOwner)
        {
            // The process that started this server was killed, so nothing will stop it: stop it now (a fast stop
            // ends its sessions and writes a shutdown checkpoint), then start a server of our own as usual.
            StorageLog.OrphanedServerStopping(logger, orphan, dataDirectory, deadOwner);
            var stop = await ProcessRunner.RunAsync(
                account, binaries.PgCtl, ["stop", "-D", dataDirectory, "-m", "fast", "-w"], ToolTimeout, cancellationToken).ConfigureAwait(false);
            if (stop.ExitCode != 0)
            {
                throw new EmbeddedPostgresException(string.Create(
                    CultureInfo.InvariantCulture,
                    $"The PostgreSQL server (PID {orphan}) left on data directory '{dataDirectory}' by process {deadOwner}, which is gone, could not be stopped: {stop.Diagnostics}"));
            }

            TryDeleteFile(Path.Combine(dataDirectory, OwnerFileName));
            users = ProcFs.ProcessesWorkingIn(dataDirectory);
            if (users.Count == 0 && !File.Exists(pidFile))
            {
                return;
            }

            status = await ProcessRunner.RunAsync(
                account, binaries.PgCtl, ["status", "-D", dataDirectory], ToolTimeout, cancellationToken).ConfigureAwait(false);
        }

        if (status.ExitCode == 0 && pid is int alive && users.Contains(alive))
        {
            throw new EmbeddedPostgresException(string.Create(
                CultureInfo.InvariantCulture,
                $"A PostgreSQL server (PID {alive}) is already running on data directory '{dataDirectory}'."));
        }

        if (users.Count > 0)
        {
            // The postmaster died but some of its server processes live on; starting a second server on the
            // same files would corrupt them, which the pid file's interlock exists to prevent.
            throw new EmbeddedPostgresException(string.Create(
                CultureInfo.InvariantCulture,
                $"Server processes (PIDs {string.Join(", ", users)}) still use data directory '{dataDirectory}' "
                + $"although its postmaster is gone; stop them before starting the cluster again."));
        }

        File.Delete(pidFile);
        StorageLog.StalePidFileRemoved(logger, pid ?? 0, dataDirectory);
    }

    /// <summary>Records this process as the one that started the server on <paramref name="dataDirectory"/>.</summary>
    private static void WriteOwner(string dataDirectory)
    {
        int pid = Environment.ProcessId;
        File.WriteAllText(
            Path.Combine(dataDirectory, OwnerFileName),
            string.Create(CultureInfo.InvariantCulture, $"{pid}\n{ProcFs.StartTime(pid)}\n"));
    }

    /// <summary>
    /// The PID of the recorded owner of the server on <paramref name="dataDirectory"/> when that process is gone (no
    /// process with that PID and start time), or null when it lives, or when no owner is recorded (unknown: left alone).
    /// </summary>
    private static int? DeadOwner(string dataDirectory)
    {
        string[] lines;
        try
        {
            lines = File.ReadAllLines(Path.Combine(dataDirectory, OwnerFileName));
        }
        catch (IOException)
        {
            return null;
        }
        catch (UnauthorizedAccessException)
        {
            return null;
        }

        if (lines.Length < 2
            || !int.TryParse(lines[0], NumberStyles.None, CultureInfo.InvariantCulture, out int owner)
            || !long.TryParse(lines[1], NumberStyles.None, CultureInfo.InvariantCulture, out long started))
        {
            return null;
        }

        return ProcFs.StartTime(owner) == started ? null : owner;
    }

    private static void TryDeleteFile(string file)
    {
        try
        {
            File.Delete(file);
        }
        catch (IOException)
        {
            // Best effort: a stale owner file names a process that is gone, which reads as "no owner".
        }
        catch (UnauthorizedAccessException)
        {
            // Same.
        }
    }

    private static bool IsSettingName(string name) =>
        name.Length > 0 && name.All(c => c is (>= 'a' and <= 'z') or (>= '0' and <= '9') or '_' or '.');

    private static bool IsSettingValue(string value) =>
        value.Length > 0 && value.All(c => char.IsAsciiLetterOrDigit(c) || c is '_' or '.' or '-');

    private static int? ReadPid(string pidFile)
    {
        try
        {
            var firstLine = File.ReadLines(pidFile).FirstOrDefault();
            return int.TryParse(firstLine, NumberStyles.Integer, CultureInfo.InvariantCulture, out var pid) ? pid : null;
        }
        catch (IOException)
        {
            return null;
        }
    }

    private async Task<(string Message, bool PortTaken)?> TryStartServerAsync(
        EmbeddedPostgresOptions options,
        CancellationToken cancellationToken)
    {
        var clock = Stopwatch.StartNew();
        var serverOptions = string.Create(
            CultureInfo.InvariantCulture,
            $"-p {Port} -k {_socketDirectory} -c listen_addresses={IPAddress.Loopback}");
        if (options.NoSync)
        {
            serverOptions += " -c fsync=off -c full_page_writes=off";
        }

        foreach (var (name, value) in options.ServerSettings.OrderBy(s => s.Key, StringComparer.Ordinal))
        {
            serverOptions += string.Create(CultureInfo.InvariantCulture, $" -c {name}={value}");
        }

        var logFile = Path.Combine(DataDirectory, "server.log");
        var start = await ProcessRunner.RunAsync(
            _account,
            _binaries.PgCtl,
            [
                "start", "-D", DataDirectory, "-l", logFile, "-w",
                "-t", options.StartTimeoutSeconds.ToString(CultureInfo.InvariantCulture),
                "-o", serverOptions,
            ],
            TimeSpan.FromSeconds(options.StartTimeoutSeconds + 30),
            cancellationToken).ConfigureAwait(false);
        if (start.ExitCode != 0)
        {
            var log = TailOf(logFile, lines: 15);
            var portTaken = log.Contains("could not bind", StringComparison.Ordinal)
                || log.Contains("could not create any TCP/IP sockets", StringComparison.Ordinal);
            var message = string.Create(
                CultureInfo.InvariantCulture,
                $"pg_ctl start failed (exit code {start.ExitCode}) for data directory '{DataDirectory}' on port {Port}: "
                + $"{start.Diagnostics}{Environment.NewLine}Server log ({logFile}):{Environment.NewLine}{log}");
            return (message, portTaken);
        }

        _running = true;
        AppDomain.CurrentDomain.ProcessExit += OnProcessExit;
        StorageLog.ClusterStarted(_logger, Port, DataDirectory, clock.ElapsedMilliseconds);
        return null;
    }

    private async Task EnsureDatabaseAsync(CancellationToken cancellationToken)
    {
        try
        {
            var admin = new NpgsqlConnectionStringBuilder(ConnectionString) { Database = "postgres", Pooling = false };
            await using var connection = new NpgsqlConnection(admin.ConnectionString);
            await connection.OpenAsync(cancellationToken).ConfigureAwait(false);
            await using var exists = new NpgsqlCommand("SELECT 1 FROM pg_database WHERE datname = $1", connection)
            {
                Parameters = { new NpgsqlParameter { Value = DatabaseName } },
            };
            if (await exists.ExecuteScalarAsync(cancellationToken).ConfigureAwait(false) is null)
            {
                await using var create = new NpgsqlCommand("CREATE DATABASE " + QuoteIdentifier(DatabaseName), connection);
                await create.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                StorageLog.DatabaseCreated(_logger, DatabaseName);
            }
        }
        catch (Exception)
        {
            await StopAsync(CancellationToken.None).ConfigureAwait(false);
            throw;
        }
    }

    private Task<ProcessResult> PgCtlAsync(IReadOnlyList<string> arguments, CancellationToken cancellationToken) =>
        ProcessRunner.RunAsync(_account, _binaries.PgCtl, arguments, ToolTimeout, cancellationToken);

    private void OnProcessExit(object? sender, EventArgs e)
    {
        // Last resort when the owner forgot to stop the server: do not leave a daemon behind.
        if (_running)
        {
            PgCtlAsync(["stop", "-D", DataDirectory, "-m", "immediate", "-w"], CancellationToken.None)
                .GetAwaiter().GetResult();
            _running = false;
        }
    }

    private static int FreeLoopbackPort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }

    private static string RandomSuffix() =>
        Convert.ToHexStringLower(System.Security.Cryptography.RandomNumberGenerator.GetBytes(6));

    private static string QuoteIdentifier(string name) => "\"" + name.Replace("\"", "\"\"", StringComparison.Ordinal) + "\"";

    private static string TailOf(string file, int lines)
    {
        try
        {
            var all = File.ReadAllLines(file);
            return string.Join(Environment.NewLine, all.Skip(Math.Max(0, all.Length - lines)));
        }
        catch (IOException ex)
        {
            return "(server log unreadable: " + ex.Message + ")";
        }
    }

    private static void TryDelete(string folder)
    {
        try
        {
            if (Directory.Exists(folder))
            {
                Directory.Delete(folder, recursive: true);
            }
        }
        catch (IOException)
        {
            // Best effort: a leftover temp folder is harmless.
        }
        catch (UnauthorizedAccessException)
        {
            // Same.
        }
    }
}
