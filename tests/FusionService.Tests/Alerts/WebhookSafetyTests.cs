// Issue 14: webhooks that cannot be pointed at the service's own network, follow no redirect, read a bounded answer,
// give up into a dead letter that the API re-queues, keep no payload past retention, and store secrets encrypted.
using System.Globalization;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Tests.Infrastructure;
using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.AspNetCore.TestHost;
using Microsoft.Extensions.DependencyInjection;
using Npgsql;

namespace FusionService.Tests.Alerts;

[Collection(ServiceTests.Name)]
public sealed class WebhookSafetyTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue14_registration_refuses_http_literal_private_addresses_localhost_and_more_than_the_cap()
    {
        var fleet = await fixture.NewFleetAsync();
        using var admin = fixture.Client(fleet.AdminKey);
        await AssertRefusedAsync(admin, "http://example.invalid/hook", "url: must be an absolute https URL of at most 2000 characters (http is not allowed: Webhooks:AllowHttp)");
        await AssertRefusedAsync(admin, "https://127.0.0.1/hook", "url: the host 127.0.0.1 is a refused destination (loopback)");
        await AssertRefusedAsync(admin, "https://127.0.0.1:8443/hook", "url: the host 127.0.0.1 is a refused destination (loopback)");
        await AssertRefusedAsync(admin, "https://10.20.30.40/hook", "url: the host 10.20.30.40 is a refused destination (private)");
        await AssertRefusedAsync(admin, "https://192.168.0.10/hook", "url: the host 192.168.0.10 is a refused destination (private)");
        await AssertRefusedAsync(admin, "https://169.254.169.254/latest", "url: the host 169.254.169.254 is a refused destination (link-local)");
        await AssertRefusedAsync(admin, "https://[::1]/hook", "url: the host ::1 is a refused destination (loopback)");
        await AssertRefusedAsync(admin, "https://[::ffff:10.0.0.1]/hook", "url: the host ::ffff:10.0.0.1 is a refused destination (private)");
        await AssertRefusedAsync(admin, "https://0.0.0.0/hook", "url: the host 0.0.0.0 is a refused destination (unspecified)");
        await AssertRefusedAsync(admin, "https://239.1.2.3/hook", "url: the host 239.1.2.3 is a refused destination (multicast)");
        await AssertRefusedAsync(admin, "https://localhost/hook", "url: the host localhost is a refused destination (loopback)");
        await AssertRefusedAsync(admin, "https://api.localhost/hook", "url: the host api.localhost is a refused destination (loopback)");
        await AssertRefusedAsync(admin, "https://user:pw@example.invalid/hook", "url: must not carry a user name or password");
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM webhooks WHERE fleet_id = $1", fleet.Id));

        // The default cap is 10 per fleet (Webhooks:MaxPerFleet); names are only checked when connecting.
        for (int i = 0; i < 10; i++)
        {
            await CreateAsync(admin, "https://hooks" + i.ToString(CultureInfo.InvariantCulture) + ".example.invalid/alerts");
        }

        using var eleventh = await admin.PostAsJsonAsync("/v1/webhooks", new { url = "https://hooks10.example.invalid/alerts", secret = WebhookDeliveryTests.Secret });
        Assert.Equal(HttpStatusCode.Conflict, eleventh.StatusCode);
        Assert.StartsWith("webhooks: the fleet has 10 subscriptions, the most allowed", (await eleventh.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(10, await fixture.CountAsync("SELECT count(*) FROM webhooks WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public async Task Issue14_a_name_that_resolves_to_loopback_is_refused_when_connecting()
    {
        var fleet = await fixture.NewFleetAsync();
        using var receiver = new WebhookReceiver();
        int port = new Uri(receiver.Url).Port;

        // http is allowed, loopback is not: the name passes registration and is refused after resolution.
        var settings = new Dictionary<string, string?>(WebhookDeliveryTests.Dispatching, StringComparer.Ordinal);
        settings.Remove("Webhooks:AllowedNetworks:0");
        await using var host = new ServiceFactory(fixture.ConnectionString, settings);
        await using var resolving = host.WithWebHostBuilder(b => b.ConfigureTestServices(s => s.AddSingleton<WebhookHostResolver>(new FixedResolver("receiver.test", IPAddress.Loopback))));
        using var admin = Client(resolving, fleet.AdminKey);
        string url = "http://receiver.test:" + port.ToString(CultureInfo.InvariantCulture) + "/hook/";
        await CreateAsync(admin, url);
        await AlertDrive.IngestAsync(Client(resolving, fleet.IngestKey), AlertDrive.WithJumps("van-rebind", seed: 1401));

        string error = await WaitForErrorAsync(fleet.Id);
        // SocketsHttpHandler appends the endpoint, " (receiver.test:<port>)", to the connector's message.
        Assert.StartsWith("destination refused: receiver.test resolves only to refused addresses: 127.0.0.1 (loopback)", error, StringComparison.Ordinal);
        Assert.Empty(receiver.Requests);
    }

    [Fact]
    public async Task Issue14_a_redirect_is_not_followed()
    {
        var fleet = await fixture.NewFleetAsync();
        using var target = new WebhookReceiver();
        using var redirecting = new WebhookReceiver
        {
            Status = _ => 307,
            Answer = response =>
            {
                response.RedirectLocation = target.Url;
                return Task.CompletedTask;
            },
        };
        await using var host = new ServiceFactory(fixture.ConnectionString, WebhookDeliveryTests.Dispatching);
        await CreateAsync(fixture.Client(fleet.AdminKey, host), redirecting.Url);
        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey, host), AlertDrive.WithJumps("van-redirect", seed: 1402));

        string error = await WaitForErrorAsync(fleet.Id);
        Assert.Equal("HTTP 307 redirect not followed (Location: " + target.Url + ")", error);
        Assert.NotEmpty(redirecting.Requests);
        Assert.Empty(target.Requests);
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE fleet_id = $1 AND delivered_at IS NOT NULL", fleet.Id));
    }

    [Fact]
    public async Task Issue14_an_endless_answer_body_is_read_only_up_to_the_bound()
    {
        var fleet = await fixture.NewFleetAsync();
        long written = 0;
        var stopped = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
        using var receiver = new WebhookReceiver
        {
            Status = _ => 200,
            Answer = async response =>
            {
                // An answer without end (chunked): only a reader that stops after a bound can finish the delivery.
                var chunk = new byte[64 * 1024];
                try
                {
                    while (written < 4L * 1024 * 1024 * 1024)
                    {
                        // Counted before the write: a write the service's close makes fail still left the receiver (a
                        // clean-clone CI run once saw the very first 64 KiB write fail, and counted 0 bytes).
                        Interlocked.Add(ref written, chunk.Length);
                        await response.OutputStream.WriteAsync(chunk);
                    }
                }
                finally
                {
                    stopped.TrySetResult();
                }
            },
        };
        await using var host = new ServiceFactory(fixture.ConnectionString, WebhookDeliveryTests.Dispatching);
        await CreateAsync(fixture.Client(fleet.AdminKey, host), receiver.Url);
        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey, host), AlertDrive.WithJumps("van-endless", seed: 1403));

        await WaitUntilAsync(async () => await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE fleet_id = $1 AND delivered_at IS NOT NULL", fleet.Id) >= 1, "a delivered row");
        await stopped.Task.WaitAsync(TimeSpan.FromSeconds(30));

        // The service read its 1,024 bytes and closed the connection; what the receiver handed to its socket before a write
        // failed is what the socket buffers on both sides took (a few MiB at most on Linux) plus the failed chunk, not the
        // 4 GiB the receiver would send.
        Assert.InRange(Interlocked.Read(ref written), 64 * 1024, 64L * 1024 * 1024);
        Assert.Equal(1, await fixture.CountAsync("SELECT attempts FROM webhook_outbox WHERE fleet_id = $1 AND delivered_at IS NOT NULL ORDER BY created_at LIMIT 1", fleet.Id));
    }

    [Fact]
    public async Task Issue14_delivery_is_dead_lettered_after_the_last_attempt_and_requeued_from_the_api()
    {
        var fleet = await fixture.NewFleetAsync();
        using var receiver = new WebhookReceiver { Status = n => n <= 3 ? 503 : 200 };
        var settings = new Dictionary<string, string?>(WebhookDeliveryTests.Dispatching, StringComparer.Ordinal)
        {
            ["Webhooks:MaxAttempts"] = "3",
            ["Webhooks:BaseDelayS"] = "0.2",
            ["Webhooks:MaxDelayS"] = "0.5",
        };
        await using var host = new ServiceFactory(fixture.ConnectionString, settings);
        using var admin = fixture.Client(fleet.AdminKey, host);
        string id = await CreateAsync(admin, receiver.Url);
        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey, host), AlertDrive.WithJumps("van-dead", seed: 1404));

        JsonElement dead = default;
        await WaitUntilAsync(
            async () =>
            {
                var list = await admin.GetFromJsonAsync<JsonElement>("/v1/webhooks/" + id + "/dead-letters");
                var letters = list.GetProperty("dead_letters");
                if (letters.GetArrayLength() == 0)
                {
                    return false;
                }

                dead = letters[0];
                return true;
            },
            "a dead letter");
        Assert.Equal(3, dead.GetProperty("attempts").GetInt32());
        Assert.Equal("HTTP 503 Service Unavailable", dead.GetProperty("last_error").GetString());
        string deliveryId = dead.GetProperty("delivery_id").GetString()!;

        // No further attempt while dead: the receiver saw exactly the three.
        await Task.Delay(1500);
        Assert.Equal(3, receiver.Requests.Count(r => r.Id == deliveryId));

        using var otherAdmin = fixture.Client((await fixture.NewFleetAsync()).AdminKey, host);
        Assert.Equal(HttpStatusCode.NotFound, (await otherAdmin.PostAsync("/v1/webhooks/" + id + "/dead-letters/requeue", null)).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await otherAdmin.GetAsync("/v1/webhooks/" + id + "/dead-letters")).StatusCode);

        using var requeue = await admin.PostAsync("/v1/webhooks/" + id + "/dead-letters/requeue", null);
        Assert.Equal(HttpStatusCode.OK, requeue.StatusCode);
        Assert.True((await requeue.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("requeued").GetInt32() >= 1);
        var requests = await receiver.WaitForAsync(r => r.Any(x => x.Id == deliveryId && x.AnsweredStatus == 200), TimeSpan.FromSeconds(30));
        WebhookDeliveryTests.AssertSigned(requests.Last(x => x.Id == deliveryId));
        await WaitUntilAsync(async () => await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE delivery_id = $1 AND delivered_at IS NOT NULL", Guid.Parse(deliveryId)) == 1, "the re-queued delivery delivered");
        Assert.Equal(0, (await admin.GetFromJsonAsync<JsonElement>("/v1/webhooks/" + id + "/dead-letters")).GetProperty("dead_letters").GetArrayLength());
    }

    [Fact]
    public async Task Issue14_an_open_circuit_stops_attempts_to_a_failing_receiver_while_its_delivery_is_due()
    {
        var fleet = await fixture.NewFleetAsync();
        using var receiver = new WebhookReceiver { Status = _ => 500 };
        var settings = new Dictionary<string, string?>(WebhookDeliveryTests.Dispatching, StringComparer.Ordinal)
        {
            ["Webhooks:BaseDelayS"] = "0.1",
            ["Webhooks:MaxDelayS"] = "0.1",
            ["Webhooks:BreakerFailures"] = "2",
            ["Webhooks:BreakerOpenS"] = "600",
        };
        await using var host = new ServiceFactory(fixture.ConnectionString, settings);
        string id = await CreateAsync(fixture.Client(fleet.AdminKey, host), receiver.Url);
        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey, host), AlertDrive.WithJumps("van-breaker", seed: 1406));
        await receiver.WaitForAsync(r => r.Length >= 2, TimeSpan.FromSeconds(40));

        // Two failures open the circuit for 600 s: the rows fall due again after 0.1 s, yet no third request is made.
        await Task.Delay(3000);
        Assert.Equal(2, receiver.Requests.Count);
        Assert.True(await fixture.CountAsync(
            "SELECT count(*) FROM webhook_outbox WHERE webhook_id = $1 AND delivered_at IS NULL AND dead_lettered_at IS NULL AND next_attempt_at <= now()", Guid.Parse(id)) >= 1);
        Assert.True(host.Services.GetRequiredService<WebhookDispatcher>().Breaker.IsOpen(Guid.Parse(id)));
    }

    [Fact]
    public async Task Issue14_delivered_rows_are_purged_after_the_keep_time_and_every_row_after_the_retention()
    {
        var fleet = await fixture.NewFleetAsync();
        using var accepting = new WebhookReceiver();
        using var failing = new WebhookReceiver { Status = _ => 500 };
        var settings = new Dictionary<string, string?>(WebhookDeliveryTests.Dispatching, StringComparer.Ordinal)
        {
            ["Webhooks:PurgeIntervalS"] = "1",
            ["Webhooks:DeliveredKeepHours"] = "24",
            ["Database:RetentionDays"] = "30",
        };
        await using var host = new ServiceFactory(fixture.ConnectionString, settings);
        using var admin = fixture.Client(fleet.AdminKey, host);
        string accepted = await CreateAsync(admin, accepting.Url);
        string failed = await CreateAsync(admin, failing.Url);
        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey, host), AlertDrive.WithJumps("van-purge", seed: 1405));
        await WaitUntilAsync(async () => await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE webhook_id = $1 AND delivered_at IS NOT NULL", Guid.Parse(accepted)) >= 1, "a delivered row");
        await WaitUntilAsync(async () => await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE webhook_id = $1 AND attempts >= 1", Guid.Parse(failed)) >= 1, "a failed attempt");

        // Delivered 25 h ago (over the 24 h keep time): purged. Delivered 1 h ago: kept. Pending but written 31 days ago
        // (over the 30-day retention): purged although never delivered.
        Guid recent = Guid.NewGuid();
        await ExecuteAsync(
            "INSERT INTO webhook_outbox (delivery_id, webhook_id, fleet_id, alert_id, payload, created_at, delivered_at, attempts) "
            + "SELECT $2, webhook_id, fleet_id, alert_id, payload, now() - interval '1 hour', now() - interval '1 hour', 1 FROM webhook_outbox "
            + "WHERE webhook_id = $1 AND delivered_at IS NOT NULL LIMIT 1",
            Guid.Parse(accepted), recent);
        await ExecuteAsync("UPDATE webhook_outbox SET delivered_at = now() - interval '25 hours' WHERE webhook_id = $1 AND delivery_id <> $2", Guid.Parse(accepted), recent);
        await ExecuteAsync("UPDATE webhook_outbox SET created_at = now() - interval '31 days' WHERE webhook_id = $1", Guid.Parse(failed));

        long aged = await fixture.CountAsync(
            "SELECT count(*) FROM webhook_outbox WHERE fleet_id = $1 AND (delivered_at < now() - interval '24 hours' OR created_at < now() - interval '30 days')", fleet.Id);
        Assert.True(aged >= 2, "rows aged for the purge: " + aged.ToString(CultureInfo.InvariantCulture));
        await WaitUntilAsync(
            async () => await fixture.CountAsync(
                "SELECT count(*) FROM webhook_outbox WHERE fleet_id = $1 AND (delivered_at < now() - interval '24 hours' OR created_at < now() - interval '30 days')", fleet.Id) == 0,
            "the aged rows purged");
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE delivery_id = $1", recent));
    }

    [Fact]
    public async Task Issue14_secret_is_stored_encrypted_and_a_plaintext_secret_from_before_is_encrypted_on_start()
    {
        var fleet = await fixture.NewFleetAsync();
        using var admin = fixture.Client(fleet.AdminKey);
        const string Secret = "plain-secret-that-must-not-be-stored-7d1f";
        string id = await CreateAsync(admin, "https://hooks.example.invalid/alerts", Secret);
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM webhooks w WHERE webhook_id = $1 AND (secret IS NOT NULL OR strpos(row_to_json(w)::text, $2) > 0)", Guid.Parse(id), Secret));
        string stored = await ScalarTextAsync("SELECT secret_protected FROM webhooks WHERE webhook_id = $1", Guid.Parse(id));
        Assert.DoesNotContain(Secret, stored, StringComparison.Ordinal);
        Assert.True(await fixture.CountAsync("SELECT count(*) FROM data_protection_keys") >= 1);
        var protector = fixture.Host.Services.GetRequiredService<WebhookSecretProtector>();
        Assert.Equal(Secret, protector.Unprotect(stored));

        // A row written before migration 0009 (plain text) is encrypted by the next process that starts.
        const string Legacy = "legacy-plaintext-secret-0123456789";
        Guid legacyId = Guid.NewGuid();
        await ExecuteAsync("INSERT INTO webhooks (webhook_id, fleet_id, url, secret) VALUES ($1, $2, 'https://legacy.example.invalid/alerts', $3)", legacyId, fleet.Id, Legacy);
        await using var next = new ServiceFactory(fixture.ConnectionString);
        _ = next.Services;
        await WaitUntilAsync(async () => await fixture.CountAsync("SELECT count(*) FROM webhooks WHERE webhook_id = $1 AND secret IS NULL", legacyId) == 1, "the legacy secret encrypted");
        string legacyStored = await ScalarTextAsync("SELECT secret_protected FROM webhooks WHERE webhook_id = $1", legacyId);
        Assert.DoesNotContain(Legacy, legacyStored, StringComparison.Ordinal);
        Assert.Equal(Legacy, protector.Unprotect(legacyStored));
    }

    private static HttpClient Client(WebApplicationFactory<Program> host, string key)
    {
        var client = host.CreateClient();
        client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return client;
    }

    private static async Task<string> CreateAsync(HttpClient admin, string url, string secret = WebhookDeliveryTests.Secret)
    {
        using var response = await admin.PostAsJsonAsync("/v1/webhooks", new { url, secret });
        Assert.True(response.StatusCode == HttpStatusCode.Created, await response.Content.ReadAsStringAsync());
        return (await response.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("id").GetString()!;
    }

    private static async Task AssertRefusedAsync(HttpClient admin, string url, string detail)
    {
        using var response = await admin.PostAsJsonAsync("/v1/webhooks", new { url, secret = WebhookDeliveryTests.Secret });
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.Equal(detail, (await response.ProblemAsync()).GetProperty("detail").GetString());
    }

    private async Task<string> WaitForErrorAsync(Guid fleetId)
    {
        string? error = null;
        await WaitUntilAsync(
            async () =>
            {
                error = await ScalarTextOrNullAsync("SELECT last_error FROM webhook_outbox WHERE fleet_id = $1 AND last_error IS NOT NULL LIMIT 1", fleetId);
                return error is not null;
            },
            "a failed attempt");
        return error!;
    }

    private static async Task WaitUntilAsync(Func<Task<bool>> done, string what)
    {
        var deadline = DateTime.UtcNow.AddSeconds(40);
        while (!await done())
        {
            Assert.True(DateTime.UtcNow < deadline, "timed out waiting for " + what);
            await Task.Delay(200);
        }
    }

    private async Task ExecuteAsync(string sql, params object[] parameters)
    {
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new NpgsqlCommand(sql, connection);
        foreach (var p in parameters)
        {
            command.Parameters.Add(new NpgsqlParameter { Value = p });
        }

        await command.ExecuteNonQueryAsync();
    }

    private async Task<string> ScalarTextAsync(string sql, params object[] parameters) =>
        await ScalarTextOrNullAsync(sql, parameters) ?? throw new InvalidOperationException("no value: " + sql);

    private async Task<string?> ScalarTextOrNullAsync(string sql, params object[] parameters)
    {
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new NpgsqlCommand(sql, connection);
        foreach (var p in parameters)
        {
            command.Parameters.Add(new NpgsqlParameter { Value = p });
        }

        return await command.ExecuteScalarAsync() as string;
    }

    private sealed class FixedResolver(string name, IPAddress address) : WebhookHostResolver
    {
        public override Task<IPAddress[]> ResolveAsync(string host, CancellationToken cancellationToken) =>
            string.Equals(host, name, StringComparison.OrdinalIgnoreCase)
                ? Task.FromResult(new[] { address })
                : throw new InvalidOperationException("unexpected name " + host);
    }
}
