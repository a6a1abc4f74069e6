// Issue 14: rate limits on the resolved key and fleet, in requests and in messages; failed authentications per address.
using System.Globalization;
using System.Net;
using System.Net.Http.Headers;
using System.Text;
using FusionService.Storage.Fleets;
using FusionService.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Tests.Security;

[Collection(ServiceTests.Name)]
public sealed class RateLimitTests(ServiceFixture fixture)
{
    /// <summary>A JSON array of <paramref name="count"/> wheel-speed messages of <paramref name="vehicle"/>, one a second, ending 5 s ago.</summary>
    internal static string Messages(string vehicle, int count)
    {
        var start = DateTimeOffset.UtcNow.AddSeconds(-count - 5);
        var body = new StringBuilder("[");
        for (int i = 0; i < count; i++)
        {
            body.Append(i == 0 ? string.Empty : ",")
                .Append("{\"vehicle\":\"").Append(vehicle).Append("\",\"kind\":\"wheel\",\"time\":\"")
                .Append(start.AddSeconds(i).ToString("O", CultureInfo.InvariantCulture)).Append("\",\"speed_mps\":3}");
        }

        return body.Append(']').ToString();
    }

    private static HttpRequestMessage Get(string path, string authorization)
    {
        var request = new HttpRequestMessage(HttpMethod.Get, path);
        request.Headers.TryAddWithoutValidation("Authorization", authorization);
        return request;
    }

    private static async Task AssertTooManyAsync(HttpResponseMessage response, string option)
    {
        Assert.Equal(HttpStatusCode.TooManyRequests, response.StatusCode);
        var retryAfter = Assert.Single(response.Headers.GetValues("Retry-After"));
        Assert.True(int.Parse(retryAfter, CultureInfo.InvariantCulture) >= 1, "Retry-After " + retryAfter);
        var problem = await response.ProblemAsync();
        Assert.Equal(429, problem.GetProperty("status").GetInt32());
        Assert.Equal(option, problem.GetProperty("limit").GetString());
        Assert.Contains(option, problem.GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Issue14_a_spent_bucket_refills_over_its_window()
    {
        var options = Microsoft.Extensions.Options.Options.Create(new FusionService.Security.SecurityOptions { RateLimitPermits = 2, RateLimitWindowSeconds = 1 });
        using var limiter = new FusionService.Security.TenantRateLimiter(options, new FusionService.Operations.ServiceMetrics());
        var caller = new FusionService.Security.ApiCaller(Guid.NewGuid(), ApiKeyRole.Read, "hash", Guid.NewGuid());
        Assert.Null(await limiter.TryRequestAsync(caller));
        Assert.Null(await limiter.TryRequestAsync(caller));
        var refused = await limiter.TryRequestAsync(caller);
        Assert.NotNull(refused);
        Assert.Equal(1, refused.RetryAfterS);
        // Two permits per second come back within a second; 3 s leaves room for a busy machine.
        await Task.Delay(TimeSpan.FromSeconds(3));
        Assert.Null(await limiter.TryRequestAsync(caller));
    }

    [Fact]
    public async Task Issue14_spellings_of_one_key_share_one_bucket_and_429_says_when_to_retry()
    {
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Security:RateLimitPermits"] = "3",
            ["Security:RateLimitWindowSeconds"] = "3600",
        });
        using var client = host.CreateClient();
        // The key filter accepts any letter case of the scheme and trims the key: all three are the same key.
        foreach (var spelling in new[] { "Bearer " + fleet.ReadKey, "bearer " + fleet.ReadKey, "BEARER   " + fleet.ReadKey + " " })
        {
            using var ok = await client.SendAsync(Get("/v1/alerts", spelling));
            Assert.Equal(HttpStatusCode.OK, ok.StatusCode);
        }

        using var refused = await client.SendAsync(Get("/v1/alerts", "Bearer " + fleet.ReadKey));
        await AssertTooManyAsync(refused, "Security:RateLimitPermits");
        // 3 permits per 3600 s refill one every 1200 s.
        Assert.InRange(int.Parse(refused.Headers.GetValues("Retry-After").Single(), CultureInfo.InvariantCulture), 1, 1200);
        using var otherKey = await client.SendAsync(Get("/v1/alerts", "Bearer " + fleet.AdminKey));
        Assert.Equal(HttpStatusCode.OK, otherKey.StatusCode);
    }

    [Fact]
    public async Task Issue14_the_fleet_limit_spans_all_its_keys_and_no_other_fleet()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Security:FleetRateLimitPermits"] = "4",
            ["Security:RateLimitWindowSeconds"] = "3600",
        });
        using var read = fixture.Client(fleet.ReadKey, host);
        using var admin = fixture.Client(fleet.AdminKey, host);
        for (int i = 0; i < 2; i++)
        {
            Assert.Equal(HttpStatusCode.OK, (await read.GetAsync("/v1/alerts")).StatusCode);
            Assert.Equal(HttpStatusCode.OK, (await admin.GetAsync("/v1/alerts")).StatusCode);
        }

        await AssertTooManyAsync(await admin.GetAsync("/v1/alerts"), "Security:FleetRateLimitPermits");
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(other.ReadKey, host).GetAsync("/v1/alerts")).StatusCode);
    }

    [Fact]
    public async Task Issue14_messages_are_counted_and_a_refused_batch_stores_nothing()
    {
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Security:MessageLimitPermits"] = "30",
            ["Security:RateLimitWindowSeconds"] = "3600",
        });
        using var ingest = fixture.Client(fleet.IngestKey, host);
        var first = await ingest.IngestOkAsync(Messages("van-rate", 25));
        Assert.Equal(25, first.Accepted);
        using var refused = await ingest.PostJsonAsync(Messages("van-rate-2", 10));
        await AssertTooManyAsync(refused, "Security:MessageLimitPermits");
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1 AND vehicle_id = 'van-rate-2'", fleet.Id));
        // Five messages are still in the bucket.
        Assert.Equal(5, (await ingest.IngestOkAsync(Messages("van-rate-3", 5))).Accepted);
    }

    /// <summary>
    /// The key's message bucket is the cluster's (a grain); this process leases 100 permits at a time from it (360 s of
    /// a 1,000-per-3,600-s refill) and spends them on batches of 30, handing what a lease has left back with the next.
    /// The bucket refills one permit every 3.6 s, so after 990 the 30 more a batch needs take over a minute to come back:
    /// that batch is refused and a batch of the 10 left is accepted, as from one process's own bucket.
    /// </summary>
    [Fact]
    public async Task Issue14_leased_message_permits_add_up_to_the_limit_in_one_process()
    {
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Security:MessageLimitPermits"] = "1000",
            ["Security:RateLimitWindowSeconds"] = "3600",
            ["Security:RateLimitLeaseSeconds"] = "360",
        });
        Assert.Equal(100, FusionService.Security.TenantRateLimiter.LeaseSize(1000, 3600, 360));
        using var ingest = fixture.Client(fleet.IngestKey, host);
        for (int i = 0; i < 33; i++)
        {
            Assert.Equal(30, (await ingest.IngestOkAsync(Messages("van-lease-" + i.ToString(CultureInfo.InvariantCulture), 30))).Accepted);
        }

        // 990 spent: a batch of 30 is refused, one of 10 is the rest of the bucket.
        using var refused = await ingest.PostJsonAsync(Messages("van-lease-over", 30));
        await AssertTooManyAsync(refused, "Security:MessageLimitPermits");
        Assert.Equal(10, (await ingest.IngestOkAsync(Messages("van-lease-last", 10))).Accepted);
    }

    [Fact]
    public async Task Issue14_a_spent_failed_authentication_bucket_stays_shut_while_a_fraction_refills()
    {
        // Three failures per hour: one permit comes back every 1,200 s. The partitioned limiter refills its buckets on a
        // 100 ms heartbeat by the elapsed fraction, so a spent bucket soon holds a small fraction of a permit; that
        // fraction must not open the address again (it once let a valid key the process had not seen through with 200).
        var options = Microsoft.Extensions.Options.Options.Create(new FusionService.Security.SecurityOptions { FailedAuthPermits = 3, RateLimitWindowSeconds = 3600 });
        using var limiter = new FusionService.Security.TenantRateLimiter(options, new FusionService.Operations.ServiceMetrics());
        var address = IPAddress.Parse("192.0.2.7"); // RFC 5737 documentation address
        for (int i = 0; i < 3; i++)
        {
            Assert.Null(limiter.FailedAuthBlocked(address));
            limiter.NoteFailedAuth(address);
        }

        Assert.NotNull(limiter.FailedAuthBlocked(address));
        // Several heartbeats later (each adds 0.1 s / 1,200 s of a permit) the bucket is still short of one permit.
        await Task.Delay(TimeSpan.FromMilliseconds(600));
        var blocked = limiter.FailedAuthBlocked(address);
        Assert.NotNull(blocked);
        Assert.Equal("Security:FailedAuthPermits", blocked.Option);
        Assert.True(blocked.RetryAfterS >= 1, "Retry-After " + blocked.RetryAfterS.ToString(CultureInfo.InvariantCulture));
        // Another address is not affected.
        Assert.Null(limiter.FailedAuthBlocked(IPAddress.Parse("192.0.2.8")));
    }

    [Fact]
    public async Task Issue14_failed_authentications_per_address_are_limited_but_a_known_key_still_passes()
    {
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Security:FailedAuthPermits"] = "3",
            ["Security:RateLimitWindowSeconds"] = "3600",
            ["Security:KeyCacheSeconds"] = "600",
        });
        using var known = fixture.Client(fleet.ReadKey, host);
        Assert.Equal(HttpStatusCode.OK, (await known.GetAsync("/v1/alerts")).StatusCode);
        using var guessing = host.CreateClient();
        for (int i = 0; i < 3; i++)
        {
            using var wrong = await guessing.SendAsync(Get("/v1/alerts", "Bearer fsk_guess" + i.ToString(CultureInfo.InvariantCulture)));
            Assert.Equal(HttpStatusCode.Unauthorized, wrong.StatusCode);
        }

        await AssertTooManyAsync(await guessing.SendAsync(Get("/v1/alerts", "Bearer fsk_guess9")), "Security:FailedAuthPermits");
        await AssertTooManyAsync(await guessing.GetAsync("/v1/alerts"), "Security:FailedAuthPermits");
        // A key this process accepted recently is not held up by the address's failures (one gateway, many devices).
        Assert.Equal(HttpStatusCode.OK, (await known.GetAsync("/v1/alerts")).StatusCode);
        // A valid key it has not seen yet waits like the rest.
        await AssertTooManyAsync(await fixture.Client(fleet.AdminKey, host).GetAsync("/v1/alerts"), "Security:FailedAuthPermits");
    }

    [Fact]
    public async Task Issue14_an_unknown_key_is_remembered_without_a_second_lookup()
    {
        var fleet = await fixture.NewFleetAsync();
        string secret = FleetAdmin.SecretPrefix + "later-" + Guid.NewGuid().ToString("N");
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Security:UnknownKeyCacheSeconds"] = "600" });
        await using var uncached = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Security:UnknownKeyCacheSeconds"] = "0" });
        using var client = fixture.Client(secret, host);
        using var plain = fixture.Client(secret, uncached);
        Assert.Equal(HttpStatusCode.Unauthorized, (await client.GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await plain.GetAsync("/v1/alerts")).StatusCode);

        // The secret becomes a valid key behind the service's back: only a host that looks it up again can know.
        await using (var insert = fixture.Store.CreateCommand(
            "INSERT INTO api_keys (key_id, fleet_id, role, key_hash, label) VALUES ($1, $2, 'read', $3, 'planted')"))
        {
            insert.Parameters.Add(new NpgsqlParameter { Value = Guid.NewGuid() });
            insert.Parameters.Add(new NpgsqlParameter { Value = fleet.Id });
            insert.Parameters.Add(new NpgsqlParameter { Value = FleetAdmin.HashSecret(secret) });
            await insert.ExecuteNonQueryAsync();
        }

        Assert.Equal(HttpStatusCode.Unauthorized, (await client.GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await plain.GetAsync("/v1/alerts")).StatusCode);
    }

    [Fact]
    public async Task Issue14_browser_stream_opens_count_against_their_own_key_not_a_shared_bucket()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Security:RateLimitPermits"] = "2",
            ["Security:RateLimitWindowSeconds"] = "3600",
        });
        host.CreateClient().Dispose();
        async Task<System.Net.WebSockets.WebSocket> OpenAsync(string key)
        {
            var browser = host.Server.CreateWebSocketClient();
            browser.SubProtocols.Add("fusion.v1");
            browser.SubProtocols.Add("fusion.key." + key);
            return await browser.ConnectAsync(new Uri(host.Server.BaseAddress, "/v1/positions/stream"), CancellationToken.None);
        }

        using var first = await OpenAsync(fleet.ReadKey);
        using var second = await OpenAsync(fleet.ReadKey);
        var refused = await Assert.ThrowsAnyAsync<Exception>(() => OpenAsync(fleet.ReadKey));
        Assert.Contains("429", refused.Message, StringComparison.Ordinal);
        // Another fleet's browser is not held up by the first fleet's opens.
        using var third = await OpenAsync(other.ReadKey);
        Assert.Equal(System.Net.WebSockets.WebSocketState.Open, third.State);
    }
}
