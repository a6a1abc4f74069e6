// Two service processes on one PostgreSQL form one Orleans cluster (Orleans:ClusterMode=Postgres): one track per
// vehicle whichever process the messages reach, and the survivor serves the vehicle after the other is killed.
using System.Diagnostics;
using System.Globalization;
using System.Net.Http.Headers;
using System.Security.Cryptography;
using FusionService.Tests.Infrastructure;
using FusionService.Vehicles;
using Xunit.Abstractions;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class ClusterTests(ServiceFixture fixture, ITestOutputHelper output)
{
    [Fact]
    public async Task Two_processes_share_one_track_per_vehicle_and_the_survivor_serves_it_after_a_kill()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-cluster";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(9)), seed: 91);
        int third = drive.Messages.Count / 3;
        string clusterId = "test-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(4));

        using var a = StartServiceProcess(clusterId, out var urlA);
        using var b = StartServiceProcess(clusterId, out var urlB);
        using var clientA = Client(urlA, fleet.IngestKey);
        using var clientB = Client(urlB, fleet.IngestKey);
        using var readA = Client(urlA, fleet.ReadKey);
        using var readB = Client(urlB, fleet.ReadKey);
        await ServiceProcessReadiness.WaitUntilReadyAsync(clientA, a);
        await ServiceProcessReadiness.WaitUntilReadyAsync(clientB, b);

        // Both processes are members of the cluster (rows of the migration's membership table, status 3 = Active
        // in Orleans' SiloStatus).
        Assert.Equal(2, await fixture.CountAsync("SELECT count(*) FROM cluster_members WHERE cluster_id = $1 AND status = 3", clusterId));

        // The first third to A (whose silo then hosts the track: new activations prefer the calling silo), the
        // second to B: one track, the same state read through either process, equal to an uninterrupted run.
        int acknowledged = (await clientA.IngestOkAsync(drive.Body(0, third))).Accepted;
        acknowledged += (await clientB.IngestOkAsync(drive.Body(third, 2 * third))).Accepted;
        Assert.Equal(2 * third, acknowledged);
        var oracle = new TrackOracle();
        oracle.Process(drive.Messages.Take(2 * third).Select(m => m.Core));
        var expected = oracle.Response(Vehicle);
        Assert.Equal(expected, await readA.StateAsync(Vehicle));
        Assert.Equal(expected, await readB.StateAsync(Vehicle));

        // Kill -9 the process hosting the track; B serves the vehicle again once Orleans has declared A dead.
        a.Kill(entireProcessTree: true);
        await a.WaitForExitAsync();
        var clock = Stopwatch.StartNew();
        VehicleStateResponse? again = null;
        while (again is null && clock.Elapsed < TimeSpan.FromSeconds(90))
        {
            using var attempt = new CancellationTokenSource(TimeSpan.FromSeconds(5));
            try
            {
                using var response = await readB.GetAsync("/v1/vehicles/" + Vehicle + "/state", attempt.Token);
                if (response.IsSuccessStatusCode)
                {
                    again = await readB.StateAsync(Vehicle);
                }
            }
            catch (OperationCanceledException)
            {
                // The call still went to the dead silo; try again.
            }
        }

        output.WriteLine($"served again by the survivor {clock.Elapsed.TotalSeconds:F1} s after the kill");
        Assert.NotNull(again);
        Assert.Equal(expected, again);

        // The rest through the survivor: the rebuilt track goes on as if nothing had happened.
        acknowledged += (await clientB.IngestOkAsync(drive.Body(2 * third, drive.Messages.Count))).Accepted;
        Assert.Equal(drive.Messages.Count, acknowledged);
        var all = new TrackOracle();
        all.Process(drive.Messages.Select(m => m.Core));
        Assert.Equal(all.Response(Vehicle), await readB.StateAsync(Vehicle));
        Assert.Equal(drive.Messages.Sum(m => m.Core.Length), await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));

        b.Kill(entireProcessTree: true);
        await b.WaitForExitAsync();
    }

    private static HttpClient Client(string url, string key)
    {
        var client = new HttpClient { BaseAddress = new Uri(url) };
        client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return client;
    }

    private Process StartServiceProcess(string clusterId, out string url)
    {
        string dll = typeof(Program).Assembly.Location;
        string address = "http://127.0.0.1:" + FreePort.Next().ToString(CultureInfo.InvariantCulture);
        url = address;
        var start = new ProcessStartInfo("dotnet")
        {
            WorkingDirectory = Path.GetDirectoryName(dll)!,
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        start.ArgumentList.Add(dll);
        start.Environment["ConnectionStrings__Fusion"] = fixture.ConnectionString;
        start.Environment["ASPNETCORE_URLS"] = address;
        start.Environment["Orleans__ClusterMode"] = "Postgres";
        start.Environment["Orleans__ClusterId"] = clusterId;
        start.Environment["Orleans__AdvertisedAddress"] = "127.0.0.1";
        start.Environment["Orleans__SiloPort"] = FreePort.Next().ToString(CultureInfo.InvariantCulture);
        start.Environment["Orleans__GatewayPort"] = "0";
        // Faster failure detection than Orleans' defaults, so that the test does not wait long for the death vote.
        start.Environment["Orleans__ProbeTimeoutS"] = "1";
        start.Environment["Orleans__MissedProbesLimit"] = "2";
        start.Environment["Ingest__AcknowledgeAfter"] = "Tracking";
        start.Environment["Ingest__MaxFutureSkewS"] = "60";
        start.Environment["Security__KeyCacheSeconds"] = "0";
        start.Environment["Serilog__MinimumLevel__Default"] = "Warning";
        start.Environment["Serilog__MinimumLevel__Override__Orleans"] = "Error";
        var process = Process.Start(start)!;
        process.OutputDataReceived += (_, e) => { if (e.Data is not null) { output.WriteLine("[" + address + "] " + e.Data); } };
        process.ErrorDataReceived += (_, e) => { if (e.Data is not null) { output.WriteLine("[" + address + " err] " + e.Data); } };
        process.BeginOutputReadLine();
        process.BeginErrorReadLine();
        return process;
    }
}
