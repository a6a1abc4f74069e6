// Two service processes on one PostgreSQL form one Orleans cluster (Orleans:ClusterMode=Postgres): one track per
// vehicle whichever process the messages reach, and the survivor serves the vehicle after the other is killed.
using System.Diagnostics;
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

        using var a = StartServiceProcess(clusterId);
        using var b = StartServiceProcess(clusterId);
        using var clientA = a.Client(fleet.IngestKey);
        using var clientB = b.Client(fleet.IngestKey);
        using var readA = a.Client(fleet.ReadKey);
        using var readB = b.Client(fleet.ReadKey);
        await a.WaitUntilReadyAsync();
        await b.WaitUntilReadyAsync();

        // Both processes become members of the cluster (rows of the migration's membership table, status 3 = Active
        // in Orleans' SiloStatus). Ready means each process serves; the second silo's row may turn Active a moment
        // later (once seen 1 of 2 right after both were ready, on a loaded machine), so wait for it, up to 30 s.
        const string ActiveMembers = "SELECT count(*) FROM cluster_members WHERE cluster_id = $1 AND status = 3";
        var joining = Stopwatch.StartNew();
        long active = await fixture.CountAsync(ActiveMembers, clusterId);
        while (active < 2 && joining.Elapsed < TimeSpan.FromSeconds(30))
        {
            await Task.Delay(200);
            active = await fixture.CountAsync(ActiveMembers, clusterId);
        }

        Assert.Equal(2, active);

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
        await a.KillAsync();
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

        await b.KillAsync();
    }

    private ServiceProcess StartServiceProcess(string clusterId)
    {
        var environment = ServiceProcess.Cluster(clusterId);
        environment["Ingest__AcknowledgeAfter"] = "Tracking";
        return ServiceProcess.Start(fixture.ConnectionString, output, environment);
    }
}
