// Issue 14: the key and fleet rate limits hold for the whole cluster, not once per process.
using System.Globalization;
using System.Net;
using System.Security.Cryptography;
using FusionService.Tests.Infrastructure;
using FusionService.Tests.Security;
using Xunit.Abstractions;

namespace FusionService.Tests.Resilience;

[Collection(ServiceTests.Name)]
public sealed class ClusterRateLimitTests(ServiceFixture fixture, ITestOutputHelper output)
{
    /// <summary>
    /// Two processes in one cluster, a key allowed 40 requests per 3,600 s (one permit back every 90 s) and leases of
    /// one permit (1 s of refill): 60 requests, alternately to each process, get 40 answers 200 in all and 20 answers
    /// 429. With a bucket per process each would have let its 30 through.
    /// </summary>
    [Fact]
    public async Task Issue14_two_processes_share_one_request_bucket_per_key()
    {
        var fleet = await fixture.NewFleetAsync();
        string clusterId = "test-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(4));
        var settings = new Dictionary<string, string>
        {
            ["Security__RateLimitPermits"] = "40",
            ["Security__RateLimitWindowSeconds"] = "3600",
        };
        using var a = StartServiceProcess(clusterId, settings);
        using var b = StartServiceProcess(clusterId, settings);
        await a.WaitUntilReadyAsync();
        await b.WaitUntilReadyAsync();
        using var readA = a.Client(fleet.ReadKey);
        using var readB = b.Client(fleet.ReadKey);

        var started = DateTime.UtcNow;
        int[] ok = [0, 0];
        int refused = 0;
        for (int i = 0; i < 60; i++)
        {
            using var response = await (i % 2 == 0 ? readA : readB).GetAsync("/v1/alerts");
            if (response.StatusCode == HttpStatusCode.OK)
            {
                ok[i % 2]++;
            }
            else
            {
                Assert.Equal(HttpStatusCode.TooManyRequests, response.StatusCode);
                refused++;
            }
        }

        double elapsedS = (DateTime.UtcNow - started).TotalSeconds;
        output.WriteLine($"accepted by A {ok[0]}, by B {ok[1]}, refused {refused}, {elapsedS:F1} s");
        // One permit comes back every 90 s: the bucket's 40, plus what came back while the requests ran.
        int refilled = (int)Math.Floor(elapsedS / 90);
        Assert.InRange(ok[0] + ok[1], 40, 40 + refilled);
        Assert.True(ok[0] > 0 && ok[1] > 0, "both processes spent permits of the shared bucket");
        await a.KillAsync();
        await b.KillAsync();
    }

    /// <summary>
    /// Messages of one fleet through two processes with leases of 100 permits (360 s of a 1,000-per-3,600-s refill),
    /// batches of 30 alternately to each: the cluster accepts at most the bucket's 1,000 (plus at most one permit of
    /// refill per 3.6 s of the test) and at least 1,000 less what the other process may still hold of its lease (99)
    /// and one batch. Per process buckets would have accepted 2,000.
    /// </summary>
    [Fact]
    public async Task Issue14_two_processes_lease_message_permits_from_one_fleet_bucket()
    {
        var fleet = await fixture.NewFleetAsync();
        string clusterId = "test-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(4));
        var settings = new Dictionary<string, string>
        {
            ["Security__FleetMessageLimitPermits"] = "1000",
            ["Security__RateLimitWindowSeconds"] = "3600",
            ["Security__RateLimitLeaseSeconds"] = "360",
        };
        using var a = StartServiceProcess(clusterId, settings);
        using var b = StartServiceProcess(clusterId, settings);
        await a.WaitUntilReadyAsync();
        await b.WaitUntilReadyAsync();
        using var ingestA = a.Client(fleet.IngestKey);
        using var ingestB = b.Client(fleet.IngestKey);

        var started = DateTime.UtcNow;
        int accepted = 0;
        int refusals = 0;
        for (int i = 0; i < 60 && refusals < 4; i++)
        {
            using var response = await (i % 2 == 0 ? ingestA : ingestB).PostJsonAsync(RateLimitTests.Messages("van-cl-" + i.ToString(CultureInfo.InvariantCulture), 30));
            if (response.StatusCode == HttpStatusCode.OK)
            {
                accepted += 30;
            }
            else
            {
                Assert.Equal(HttpStatusCode.TooManyRequests, response.StatusCode);
                refusals++;
            }
        }

        double elapsedS = (DateTime.UtcNow - started).TotalSeconds;
        output.WriteLine($"accepted {accepted} messages, {refusals} batches refused, {elapsedS:F1} s");
        int refilled = (int)Math.Floor(elapsedS / 3.6);
        Assert.InRange(accepted, 1000 - 99 - 30, 1000 + refilled);
        Assert.Equal(accepted, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
        await a.KillAsync();
        await b.KillAsync();
    }

    private ServiceProcess StartServiceProcess(string clusterId, Dictionary<string, string> settings)
    {
        var environment = ServiceProcess.Cluster(clusterId);
        foreach (var (key, value) in settings)
        {
            environment[key] = value;
        }

        return ServiceProcess.Start(fixture.ConnectionString, output, environment);
    }
}
