// The embedded cluster: restart on the same data, crash and stale-pid recovery, clear errors, cleanup.
using System.Diagnostics;
using System.Globalization;
using System.Net.Sockets;
using FusionService.Storage.Cluster;
using Npgsql;

namespace FusionService.Storage.Tests.Cluster;

/// <summary>Each test starts its own cluster (independent of the shared test server) and always stops it.</summary>
public sealed class EmbeddedPostgresTests
{
    [Fact]
    public async Task A_restart_on_the_same_data_directory_keeps_the_data()
    {
        var dataDirectory = NewDataDirectoryPath();
        try
        {
            await using (var first = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory)))
            {
                await ExecuteAsync(first.ConnectionString, "CREATE TABLE kept (id int PRIMARY KEY, note text); INSERT INTO kept VALUES (1, 'before restart')");
                await first.StopAsync();
                Assert.False(first.IsRunning);
                Assert.False(Listening(first.Port));
            }

            Assert.True(File.Exists(Path.Combine(dataDirectory, "PG_VERSION")));
            await using var second = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory));
            Assert.Equal("before restart", await ScalarAsync<string>(second.ConnectionString, "SELECT note FROM kept WHERE id = 1"));
        }
        finally
        {
            DeleteFolder(dataDirectory);
        }
    }

    [Fact]
    public async Task After_a_crash_the_stale_pid_file_is_recovered_and_committed_data_survives()
    {
        var dataDirectory = NewDataDirectoryPath();
        try
        {
            await using (var crashed = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory)))
            {
                await ExecuteAsync(crashed.ConnectionString, "CREATE TABLE kept (id int); INSERT INTO kept VALUES (42)");
                NpgsqlConnection.ClearAllPools();
                KillServerProcesses(dataDirectory);
                Assert.True(File.Exists(Path.Combine(dataDirectory, "postmaster.pid")), "a killed server leaves its pid file");

                // Disposing the handle of a dead server must not throw.
            }

            await using var restarted = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory));
            Assert.Equal(42, await ScalarAsync<int>(restarted.ConnectionString, "SELECT id FROM kept"));
        }
        finally
        {
            DeleteFolder(dataDirectory);
        }
    }

    [Fact]
    public async Task A_pid_file_naming_a_live_unrelated_process_is_recovered()
    {
        // After a crash the recorded PID may belong to another process of the same account (PIDs are reused);
        // PostgreSQL alone then refuses to start ("lock file postmaster.pid already exists").
        var dataDirectory = NewDataDirectoryPath();
        using var unrelated = StartSleeperAsClusterAccount(out var unrelatedPid);
        try
        {
            string pidFileText;
            await using (var first = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory)))
            {
                pidFileText = await File.ReadAllTextAsync(Path.Combine(dataDirectory, "postmaster.pid"));
            }

            var lines = pidFileText.Split('\n');
            lines[0] = unrelatedPid.ToString(CultureInfo.InvariantCulture);
            await File.WriteAllTextAsync(Path.Combine(dataDirectory, "postmaster.pid"), string.Join('\n', lines));

            await using var second = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory));

            Assert.Equal(1, await ScalarAsync<int>(second.ConnectionString, "SELECT 1"));
            var newPid = File.ReadLines(Path.Combine(dataDirectory, "postmaster.pid")).First();
            Assert.NotEqual(unrelatedPid.ToString(CultureInfo.InvariantCulture), newPid);
            Assert.False(unrelated.HasExited, "the unrelated process must be left alone");
        }
        finally
        {
            unrelated.Kill(entireProcessTree: true);
            DeleteFolder(dataDirectory);
        }
    }

    [Fact]
    public async Task Issue13_a_server_left_running_by_a_killed_owner_is_stopped_and_a_new_one_starts()
    {
        // The owner is a real process that is killed with SIGKILL while its server runs, as after kill -9 of the
        // service: the server outlives it. The next start must stop that server and start its own.
        var dataDirectory = NewDataDirectoryPath();
        var first = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory));
        EmbeddedPostgres? second = null;
        using var owner = StartSleeperAsClusterAccount(out var ownerPid);
        try
        {
            await ExecuteAsync(first.ConnectionString, "CREATE TABLE kept (id int); INSERT INTO kept VALUES (13)");
            NpgsqlConnection.ClearAllPools();
            var ownerStart = File.ReadAllLines("/proc/" + ownerPid.ToString(CultureInfo.InvariantCulture) + "/stat")[0];
            string startTicks = ownerStart[(ownerStart.LastIndexOf(')') + 2)..].Split(' ')[19];
            await File.WriteAllTextAsync(
                Path.Combine(dataDirectory, EmbeddedPostgres.OwnerFileName),
                ownerPid.ToString(CultureInfo.InvariantCulture) + "\n" + startTicks + "\n");
            int orphanPid = int.Parse(File.ReadLines(Path.Combine(dataDirectory, "postmaster.pid")).First(), CultureInfo.InvariantCulture);

            // While the recorded owner lives, the server is its and the start is refused.
            var refused = await Assert.ThrowsAsync<EmbeddedPostgresException>(() => EmbeddedPostgres.StartAsync(Persistent(dataDirectory)));
            Assert.Contains("already running", refused.Message, StringComparison.Ordinal);

            // SIGKILL to the recorded process itself (under runuser it is the child, not the runuser process).
            using (var recorded = Process.GetProcessById(ownerPid))
            {
                recorded.Kill();
                await recorded.WaitForExitAsync();
            }

            await owner.WaitForExitAsync();
            second = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory));

            Assert.Equal(13, await ScalarAsync<int>(second.ConnectionString, "SELECT id FROM kept"));
            Assert.True(Exited(orphanPid), "the orphaned server was stopped");
            Assert.NotEqual(orphanPid, int.Parse(File.ReadLines(Path.Combine(dataDirectory, "postmaster.pid")).First(), CultureInfo.InvariantCulture));
            Assert.NotEqual(first.Port, second.Port);
            Assert.False(Listening(first.Port));
            var ownerLines = File.ReadAllLines(Path.Combine(dataDirectory, EmbeddedPostgres.OwnerFileName));
            Assert.Equal(Environment.ProcessId.ToString(CultureInfo.InvariantCulture), ownerLines[0]);
        }
        finally
        {
            if (second is not null)
            {
                await second.DisposeAsync();
            }

            owner.Kill(entireProcessTree: true);

            // The first handle's server is gone (stopped above); disposing it must not touch anything else.
            await first.DisposeAsync();
            DeleteFolder(dataDirectory);
        }
    }

    [Fact]
    public async Task A_second_start_on_a_running_cluster_is_refused()
    {
        var dataDirectory = NewDataDirectoryPath();
        try
        {
            await using var running = await EmbeddedPostgres.StartAsync(Persistent(dataDirectory));

            var error = await Assert.ThrowsAsync<EmbeddedPostgresException>(
                () => EmbeddedPostgres.StartAsync(Persistent(dataDirectory)));

            Assert.Contains("already running", error.Message, StringComparison.Ordinal);
            Assert.Equal(1, await ScalarAsync<int>(running.ConnectionString, "SELECT 1"));
        }
        finally
        {
            DeleteFolder(dataDirectory);
        }
    }

    [Fact]
    public async Task Server_settings_are_applied_at_start()
    {
        var settings = new Dictionary<string, string>(StringComparer.Ordinal) { ["shared_buffers"] = "48MB", ["checkpoint_timeout"] = "17min" };
        await using var cluster = await EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions { NoSync = true, ServerSettings = settings });
        Assert.Equal("48MB", await ScalarAsync<string>(cluster.ConnectionString, "SHOW shared_buffers"));
        Assert.Equal("17min", await ScalarAsync<string>(cluster.ConnectionString, "SHOW checkpoint_timeout"));
    }

    [Theory]
    [InlineData("shared_buffers", "1GB -c fsync=off")]
    [InlineData("Shared Buffers", "1GB")]
    [InlineData("work_mem", "")]
    public async Task A_server_setting_outside_the_plain_form_is_refused_before_anything_starts(string name, string value)
    {
        var settings = new Dictionary<string, string>(StringComparer.Ordinal) { [name] = value };
        var error = await Assert.ThrowsAsync<ArgumentException>(
            () => EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions { NoSync = true, ServerSettings = settings }));
        Assert.Contains($"'{name}'", error.Message, StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_throwaway_cluster_creates_the_fusion_database_and_deletes_its_folder_on_dispose()
    {
        var cluster = await EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions { NoSync = true });
        var dataDirectory = cluster.DataDirectory;
        try
        {
            var builder = new NpgsqlConnectionStringBuilder(cluster.ConnectionString);
            Assert.Equal("127.0.0.1", builder.Host);
            Assert.Equal("postgres", builder.Username);
            Assert.Equal("fusion", builder.Database);
            Assert.True(builder.Pooling);
            Assert.Equal("fusion", await ScalarAsync<string>(cluster.ConnectionString, "SELECT current_database()"));
            Assert.StartsWith("15.", await ScalarAsync<string>(cluster.ConnectionString, "SHOW server_version"), StringComparison.Ordinal);
            Assert.True(Directory.Exists(dataDirectory));
        }
        finally
        {
            await cluster.DisposeAsync();
        }

        Assert.False(cluster.IsRunning);
        Assert.False(Listening(cluster.Port));
        Assert.False(Directory.Exists(dataDirectory));
    }

    [Fact]
    public async Task Missing_binaries_are_named_in_the_error()
    {
        var error = await Assert.ThrowsAsync<EmbeddedPostgresException>(
            () => EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions { BinDirectory = "/nonexistent/pg/bin" }));

        Assert.Contains("/nonexistent/pg/bin/initdb", error.Message, StringComparison.Ordinal);
        Assert.Contains("/nonexistent/pg/bin/pg_ctl", error.Message, StringComparison.Ordinal);
    }

    [Fact]
    public async Task An_initdb_failure_quotes_initdb()
    {
        var dataDirectory = NewDataDirectoryPath();
        Directory.CreateDirectory(dataDirectory);
        await File.WriteAllTextAsync(Path.Combine(dataDirectory, "not-a-cluster.txt"), "occupied");
        try
        {
            var error = await Assert.ThrowsAsync<EmbeddedPostgresException>(
                () => EmbeddedPostgres.StartAsync(Persistent(dataDirectory)));

            Assert.Contains("initdb failed", error.Message, StringComparison.Ordinal);
            Assert.Contains("exists but is not empty", error.Message, StringComparison.Ordinal);
            Assert.True(File.Exists(Path.Combine(dataDirectory, "not-a-cluster.txt")), "a caller's folder is never deleted on failure");
        }
        finally
        {
            DeleteFolder(dataDirectory);
        }
    }

    private static EmbeddedPostgresOptions Persistent(string dataDirectory) =>
        new() { DataDirectory = dataDirectory, NoSync = true, DeleteDataDirectoryOnDispose = false };

    private static string NewDataDirectoryPath() =>
        Path.Combine(Path.GetTempPath(), "fusion-pg-test-" + Guid.NewGuid().ToString("N")[..12]);

    private static void DeleteFolder(string folder)
    {
        if (Directory.Exists(folder))
        {
            Directory.Delete(folder, recursive: true);
        }
    }

    private static bool Listening(int port)
    {
        using var client = new TcpClient();
        try
        {
            client.Connect("127.0.0.1", port);
            return true;
        }
        catch (SocketException)
        {
            return false;
        }
    }

    private static async Task ExecuteAsync(string connectionString, string sql)
    {
        await using var connection = new NpgsqlConnection(connectionString);
        await connection.OpenAsync();
        await using var command = new NpgsqlCommand(sql, connection);
        await command.ExecuteNonQueryAsync();
    }

    private static async Task<T> ScalarAsync<T>(string connectionString, string sql)
    {
        await using var connection = new NpgsqlConnection(connectionString);
        await connection.OpenAsync();
        await using var command = new NpgsqlCommand(sql, connection);
        return (T)(await command.ExecuteScalarAsync())!;
    }

    // SIGKILL the postmaster and every server process, as a power cut of the service would.
    private static void KillServerProcesses(string dataDirectory)
    {
        foreach (var pid in ProcFs.ProcessesWorkingIn(dataDirectory))
        {
            try
            {
                Process.GetProcessById(pid).Kill();
            }
            catch (ArgumentException)
            {
                // Already gone.
            }
        }

        var deadline = Stopwatch.StartNew();
        while (ProcFs.ProcessesWorkingIn(dataDirectory).Count > 0)
        {
            Assert.True(deadline.Elapsed < TimeSpan.FromSeconds(10), "server processes did not die");
            Thread.Sleep(20);
        }
    }

    // A long-running process owned by the account the cluster runs under, whose PID we know.
    /// <summary>Whether process <paramref name="pid"/> has ended: gone, or a zombie not yet reaped by its parent (proc(5): state Z).</summary>
    private static bool Exited(int pid)
    {
        try
        {
            var stat = File.ReadAllText("/proc/" + pid.ToString(CultureInfo.InvariantCulture) + "/stat");
            return stat[(stat.LastIndexOf(')') + 2)..].StartsWith('Z');
        }
        catch (IOException)
        {
            return true;
        }
    }

    private static Process StartSleeperAsClusterAccount(out int pid)
    {
        var account = ServiceAccount.Detect();
        var info = new ProcessStartInfo { RedirectStandardOutput = true, UseShellExecute = false, WorkingDirectory = "/" };
        if (account.SwitchUser)
        {
            info.FileName = account.RunUserPath;
            foreach (var argument in new[] { "-u", ServiceAccount.PostgresUser, "--" })
            {
                info.ArgumentList.Add(argument);
            }

            info.ArgumentList.Add("/bin/sh");
        }
        else
        {
            info.FileName = "/bin/sh";
        }

        info.ArgumentList.Add("-c");
        info.ArgumentList.Add("echo $$; exec sleep 120");
        var process = Process.Start(info)!;
        pid = int.Parse(process.StandardOutput.ReadLine()!, CultureInfo.InvariantCulture);
        return process;
    }
}
