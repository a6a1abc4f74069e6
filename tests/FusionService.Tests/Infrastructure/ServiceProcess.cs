// The service as a separate OS process (dotnet FusionService.dll), for tests that kill, stop and restart it.
using System.Diagnostics;
using System.Globalization;
using System.Net.Http.Headers;
using Xunit.Abstractions;

namespace FusionService.Tests.Infrastructure;

/// <summary>
/// One service process started with <c>dotnet FusionService.dll</c> on a loopback port, the run's PostgreSQL and the
/// environment given; <see cref="StartAgain"/> runs the same command again (same ports and settings), as an automatic
/// restart would. Its output goes to the test's output, prefixed with its address.
/// </summary>
internal sealed class ServiceProcess : IDisposable
{
    private readonly ProcessStartInfo _start;
    private readonly ITestOutputHelper? _output;

    private ServiceProcess(ProcessStartInfo start, string url, ITestOutputHelper? output)
    {
        _start = start;
        _output = output;
        Url = url;
        Process = Launch();
    }

    /// <summary>The base address, <c>http://127.0.0.1:PORT</c>.</summary>
    public string Url { get; }

    /// <summary>Every line the process wrote (standard output and error), in arrival order.</summary>
    public System.Collections.Concurrent.ConcurrentQueue<string> Lines { get; } = new();

    /// <summary>The running (or exited) process of the newest start.</summary>
    public Process Process { get; private set; }

    /// <summary>
    /// Starts the service on a free port with <paramref name="connectionString"/> and, on top of the settings every
    /// test process gets (60 s of future skew, keys not cached, warnings only), <paramref name="environment"/>.
    /// </summary>
    public static ServiceProcess Start(string connectionString, ITestOutputHelper? output, IReadOnlyDictionary<string, string>? environment = null)
    {
        string dll = typeof(Program).Assembly.Location;
        string url = "http://127.0.0.1:" + FreePort.Next().ToString(CultureInfo.InvariantCulture);
        var start = new ProcessStartInfo("dotnet")
        {
            WorkingDirectory = Path.GetDirectoryName(dll)!,
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        start.ArgumentList.Add(dll);
        start.Environment["ConnectionStrings__Fusion"] = connectionString;
        start.Environment["ASPNETCORE_URLS"] = url;
        start.Environment["Orleans__SiloPort"] = FreePort.Next().ToString(CultureInfo.InvariantCulture);
        start.Environment["Orleans__GatewayPort"] = "0";
        start.Environment["Ingest__MaxFutureSkewS"] = "60";
        start.Environment["Security__KeyCacheSeconds"] = "0";
        start.Environment["Serilog__MinimumLevel__Default"] = "Warning";
        start.Environment["Serilog__MinimumLevel__Override__Orleans"] = "Error";
        start.Environment["Serilog__MinimumLevel__Override__Polly"] = "Error";
        foreach (var (name, value) in environment ?? new Dictionary<string, string>())
        {
            start.Environment[name] = value;
        }

        return new ServiceProcess(start, url, output);
    }

    /// <summary>
    /// Settings of a process in cluster <paramref name="clusterId"/> on the run's PostgreSQL (Orleans:ClusterMode=Postgres),
    /// with faster failure detection than Orleans' defaults (probe 1 s, 2 missed) so that tests do not wait long for
    /// the death vote after a kill.
    /// </summary>
    public static Dictionary<string, string> Cluster(string clusterId) => new()
    {
        ["Orleans__ClusterMode"] = "Postgres",
        ["Orleans__ClusterId"] = clusterId,
        ["Orleans__AdvertisedAddress"] = "127.0.0.1",
        ["Orleans__ProbeTimeoutS"] = "1",
        ["Orleans__MissedProbesLimit"] = "2",
    };

    /// <summary>A client of this process sending <paramref name="key"/> (none when null).</summary>
    public HttpClient Client(string? key)
    {
        var client = new HttpClient { BaseAddress = new Uri(Url) };
        if (key is not null)
        {
            client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        }

        return client;
    }

    /// <summary>Polls <c>/health/ready</c> until it answers 2xx (<see cref="ServiceProcessReadiness"/>).</summary>
    public async Task WaitUntilReadyAsync()
    {
        using var client = Client(null);
        await ServiceProcessReadiness.WaitUntilReadyAsync(client, Process);
    }

    /// <summary>SIGKILL: the process dies at once, nothing is flushed.</summary>
    public async Task KillAsync()
    {
        Process.Kill(entireProcessTree: true);
        await Process.WaitForExitAsync();
    }

    /// <summary>SIGTERM (what a process manager sends for a clean stop), then waits for the process to exit.</summary>
    public async Task StopAsync()
    {
        using (var signal = System.Diagnostics.Process.Start("kill", ["-TERM", Process.Id.ToString(CultureInfo.InvariantCulture)]))
        {
            await signal.WaitForExitAsync();
        }

        using var bound = new CancellationTokenSource(TimeSpan.FromSeconds(60));
        await Process.WaitForExitAsync(bound.Token);
    }

    /// <summary>Runs the same command again (the previous process must have exited).</summary>
    public void StartAgain()
    {
        Assert.True(Process.HasExited, "the previous process is still running");
        Process.Dispose();
        Process = Launch();
    }

    /// <inheritdoc />
    public void Dispose()
    {
        if (!Process.HasExited)
        {
            Process.Kill(entireProcessTree: true);
            Process.WaitForExit(10_000);
        }

        Process.Dispose();
    }

    private Process Launch()
    {
        var process = System.Diagnostics.Process.Start(_start)!;
        string prefix = "[" + Url + "] ";
        process.OutputDataReceived += (_, e) => Write(prefix, e.Data);
        process.ErrorDataReceived += (_, e) => Write(prefix, e.Data);
        process.BeginOutputReadLine();
        process.BeginErrorReadLine();
        return process;
    }

    private void Write(string prefix, string? line)
    {
        if (line is not null)
        {
            Lines.Enqueue(line);
        }

        if (line is null || _output is null)
        {
            return;
        }

        try
        {
            _output.WriteLine(prefix + line);
        }
        catch (InvalidOperationException)
        {
            // The test has finished; its output is closed.
        }
    }
}
