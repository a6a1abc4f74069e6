// Issue 14: keys listed, created with an expiry, revoked and rotated (API and command line); streams closed with their key.
using System.Globalization;
using System.Net;
using System.Net.Http.Json;
using System.Net.WebSockets;
using System.Text;
using System.Text.Json;
using FusionService.Storage.Fleets;
using FusionService.Tests.Infrastructure;
using Microsoft.Extensions.Configuration;

namespace FusionService.Tests.Security;

[Collection(ServiceTests.Name)]
public sealed class KeyLifecycleTests(ServiceFixture fixture)
{
    private static StringContent Json(string body) => new(body, Encoding.UTF8, "application/json");

    private static async Task<JsonElement> CreatedAsync(HttpResponseMessage response)
    {
        string text = await response.Content.ReadAsStringAsync();
        Assert.True(response.StatusCode == HttpStatusCode.Created, (int)response.StatusCode + ": " + text);
        return JsonDocument.Parse(text).RootElement.Clone();
    }

    [Fact]
    public async Task Issue14_an_admin_creates_lists_rotates_and_revokes_keys_of_its_own_fleet_only()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        using var admin = fixture.Client(fleet.AdminKey);
        using var otherAdmin = fixture.Client(other.AdminKey);
        string expires = DateTimeOffset.UtcNow.AddDays(7).ToString("yyyy-MM-dd'T'HH:mm:ss'Z'", CultureInfo.InvariantCulture);
        var created = await CreatedAsync(await admin.PostAsync("/v1/keys", Json("{\"role\":\"read\",\"label\":\"wall screen\",\"expires_at\":\"" + expires + "\"}")));
        string secret = created.GetProperty("secret").GetString()!;
        string id = created.GetProperty("key").GetProperty("id").GetString()!;
        Assert.Equal("read", created.GetProperty("key").GetProperty("role").GetString());
        Assert.Equal("active", created.GetProperty("key").GetProperty("state").GetString());
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(secret).GetAsync("/v1/alerts")).StatusCode);

        var listed = (await admin.GetFromJsonAsync<JsonElement>("/v1/keys")).GetProperty("keys").EnumerateArray().ToList();
        Assert.Equal(4, listed.Count);
        var entry = listed.Single(k => k.GetProperty("id").GetString() == id);
        Assert.Equal("wall screen", entry.GetProperty("label").GetString());
        Assert.Equal(DateTimeOffset.Parse(expires, CultureInfo.InvariantCulture), entry.GetProperty("expires_at").GetDateTimeOffset());
        Assert.DoesNotContain(secret, await admin.GetStringAsync("/v1/keys"), StringComparison.Ordinal);

        // Another fleet's admin cannot see or touch the key; a read key cannot manage keys.
        Assert.DoesNotContain(id, await otherAdmin.GetStringAsync("/v1/keys"), StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.NotFound, (await otherAdmin.PostAsync("/v1/keys/" + id + "/revoke", null)).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await otherAdmin.PostAsync("/v1/keys/" + id + "/rotate", null)).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(fleet.ReadKey).GetAsync("/v1/keys")).StatusCode);

        // Rotation with a grace period: both keys work until the old one expires.
        var rotated = await CreatedAsync(await admin.PostAsync("/v1/keys/" + id + "/rotate", Json("{\"grace_s\":3600}")));
        string secret2 = rotated.GetProperty("secret").GetString()!;
        Assert.Equal("read", rotated.GetProperty("key").GetProperty("role").GetString());
        Assert.Equal("wall screen", rotated.GetProperty("key").GetProperty("label").GetString());
        var oldExpiry = rotated.GetProperty("replaced").GetProperty("expires_at").GetDateTimeOffset();
        Assert.InRange(oldExpiry, DateTimeOffset.UtcNow.AddMinutes(55), DateTimeOffset.UtcNow.AddMinutes(61));
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(secret).GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(secret2).GetAsync("/v1/alerts")).StatusCode);

        // Rotation without one revokes the old key at once.
        string id2 = rotated.GetProperty("key").GetProperty("id").GetString()!;
        var rotatedAgain = await CreatedAsync(await admin.PostAsync("/v1/keys/" + id2 + "/rotate", null));
        Assert.Equal("revoked", rotatedAgain.GetProperty("replaced").GetProperty("state").GetString());
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Client(secret2).GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.BadRequest, (await admin.PostAsync("/v1/keys/" + id2 + "/rotate", null)).StatusCode);

        using var revoke = await admin.PostAsync("/v1/keys/" + id + "/revoke", null);
        Assert.Equal(HttpStatusCode.OK, revoke.StatusCode);
        Assert.Equal("revoked", (await revoke.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("state").GetString());
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Client(secret).GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(rotatedAgain.GetProperty("secret").GetString()).GetAsync("/v1/alerts")).StatusCode);
    }

    [Theory]
    [InlineData("{\"role\":\"root\"}", "role:")]
    [InlineData("{\"label\":\"no role\"}", "role: is required")]
    [InlineData("{\"role\":\"read\",\"expires_at\":\"2001-01-01T00:00:00Z\"}", "expires_at: must be in the future")]
    [InlineData("{\"role\":\"read\",\"expires_at\":\"tomorrow\"}", "expires_at:")]
    [InlineData("{\"role\":\"read\",\"owner\":\"x\"}", "owner: unknown field")]
    [InlineData("{\"role\":\"read\",\"label\":\"\\ud800\"}", "label: must be a string")]
    [InlineData("{\"role\":\"read\",\"label\":\"a\\u0000b\"}", "label: must be a string")]
    [InlineData("[1]", "body: must be a JSON object")]
    [InlineData("{\"role\":", "body: not valid JSON")]
    public async Task Issue14_an_invalid_key_request_names_the_field(string body, string expected)
    {
        var fleet = await fixture.NewFleetAsync();
        using var response = await fixture.Client(fleet.AdminKey).PostAsync("/v1/keys", Json(body));
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.StartsWith(expected, (await response.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Issue14_a_key_past_its_expiry_is_refused()
    {
        var fleet = await fixture.NewFleetAsync();
        var key = await new FleetAdmin(fixture.Store).CreateApiKeyAsync(fleet.Id, ApiKeyRole.Read, "short", DateTimeOffset.UtcNow.AddSeconds(2));
        using var client = fixture.Client(key.Secret);
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/v1/alerts")).StatusCode);
        await Task.Delay(TimeSpan.FromSeconds(2.5));
        using var refused = await client.GetAsync("/v1/alerts");
        Assert.Equal(HttpStatusCode.Unauthorized, refused.StatusCode);
        var listed = (await fixture.Client(fleet.AdminKey).GetFromJsonAsync<JsonElement>("/v1/keys")).GetProperty("keys").EnumerateArray();
        Assert.Equal("expired", listed.Single(k => k.GetProperty("id").GetGuid() == key.KeyId).GetProperty("state").GetString());
    }

    [Fact]
    public async Task Issue14_open_streams_close_with_1008_when_their_key_is_revoked_here()
    {
        var fleet = await fixture.NewFleetAsync();
        var admin = new FleetAdmin(fixture.Store);
        var reader = await admin.CreateApiKeyAsync(fleet.Id, ApiKeyRole.Read, "browser");
        var tracker = await admin.CreateApiKeyAsync(fleet.Id, ApiKeyRole.Ingest, "tracker");
        var keeper = await admin.CreateApiKeyAsync(fleet.Id, ApiKeyRole.Read, "kept");
        using var positions = await OpenBrowserStreamAsync(fixture.Host, reader.Secret, "/v1/positions/stream");
        using var alerts = await OpenBrowserStreamAsync(fixture.Host, reader.Secret, "/v1/alerts/stream");
        using var kept = await OpenBrowserStreamAsync(fixture.Host, keeper.Secret, "/v1/alerts/stream");
        var telemetryClient = fixture.Host.Server.CreateWebSocketClient();
        telemetryClient.ConfigureRequest = r => r.Headers.Authorization = "Bearer " + tracker.Secret;
        using var telemetry = await telemetryClient.ConnectAsync(new Uri(fixture.Host.Server.BaseAddress, "/v1/telemetry/stream"), CancellationToken.None);

        using var adminClient = fixture.Client(fleet.AdminKey);
        Assert.Equal(HttpStatusCode.OK, (await adminClient.PostAsync("/v1/keys/" + reader.KeyId + "/revoke", null)).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await adminClient.PostAsync("/v1/keys/" + tracker.KeyId + "/revoke", null)).StatusCode);
        foreach (var socket in new[] { positions, alerts, telemetry })
        {
            Assert.Equal(WebSocketCloseStatus.PolicyViolation, await CloseStatusAsync(socket, TimeSpan.FromSeconds(10)));
        }

        Assert.Equal(WebSocketState.Open, kept.State);
    }

    [Fact]
    public async Task Issue14_open_streams_close_when_another_process_revokes_their_key()
    {
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Security:StreamKeyRecheckSeconds"] = "1" });
        host.CreateClient().Dispose();
        var reader = await new FleetAdmin(fixture.Store).CreateApiKeyAsync(fleet.Id, ApiKeyRole.Read, "browser");
        using var positions = await OpenBrowserStreamAsync(host, reader.Secret, "/v1/positions/stream");
        // As `keys revoke` does: straight in the store, behind the service's back.
        Assert.True(await new FleetAdmin(fixture.Store).RevokeApiKeyAsync(reader.KeyId));
        Assert.Equal(WebSocketCloseStatus.PolicyViolation, await CloseStatusAsync(positions, TimeSpan.FromSeconds(15)));
    }

    [Fact]
    public async Task Issue14_the_keys_command_lists_revokes_rotates_and_sets_the_quota()
    {
        var fleet = await fixture.NewFleetAsync();
        var configuration = new ConfigurationBuilder()
            .AddInMemoryCollection(new Dictionary<string, string?> { ["ConnectionStrings:Fusion"] = fixture.ConnectionString })
            .Build();
        async Task<(int Code, string Output, string Error)> RunAsync(params string[] args)
        {
            using var output = new StringWriter(CultureInfo.InvariantCulture);
            using var error = new StringWriter(CultureInfo.InvariantCulture);
            int code = await FusionService.Cli.KeysCommand.RunAsync(args, configuration, output, error);
            return (code, output.ToString(), error.ToString());
        }

        var created = await RunAsync("keys", "create", "--fleet", fleet.Name, "--role", "read", "--label", "depot", "--expires-in-days", "30");
        Assert.Equal(0, created.Code);
        string id = created.Output.Split('\n').Single(l => l.StartsWith("key id:", StringComparison.Ordinal)).Split(' ')[^1].Trim();
        string secret = created.Output.Split('\n').Single(l => l.StartsWith("secret", StringComparison.Ordinal)).Split(' ')[^1].Trim();
        Assert.Contains("expires: ", created.Output, StringComparison.Ordinal);
        var listed = await RunAsync("keys", "list", "--fleet", fleet.Name);
        Assert.Equal(0, listed.Code);
        Assert.Contains(listed.Output.Split('\n'), l => l.StartsWith(id, StringComparison.Ordinal) && l.Contains("active", StringComparison.Ordinal) && l.EndsWith("depot", StringComparison.Ordinal));
        Assert.DoesNotContain(secret, listed.Output, StringComparison.Ordinal);

        var rotated = await RunAsync("keys", "rotate", "--fleet", fleet.Name, "--id", id);
        Assert.Equal(0, rotated.Code);
        Assert.Contains("revoked at", rotated.Output, StringComparison.Ordinal);
        string secret2 = rotated.Output.Split('\n').Single(l => l.StartsWith("secret", StringComparison.Ordinal)).Split(' ')[^1].Trim();
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Client(secret).GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(secret2).GetAsync("/v1/alerts")).StatusCode);
        string id2 = rotated.Output.Split('\n').Single(l => l.StartsWith("new key id:", StringComparison.Ordinal)).Split(' ')[^1].Trim();
        Assert.Equal(0, (await RunAsync("keys", "revoke", "--fleet", fleet.Name, "--id", id2)).Code);
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Client(secret2).GetAsync("/v1/alerts")).StatusCode);
        Assert.Equal(1, (await RunAsync("keys", "revoke", "--fleet", fleet.Name, "--id", Guid.NewGuid().ToString())).Code);
        Assert.Equal(1, (await RunAsync("keys", "list", "--fleet", "no-such-fleet-" + Guid.NewGuid().ToString("N"))).Code);

        var quota = await RunAsync("keys", "quota", "--fleet", fleet.Name, "--max", "7");
        Assert.Equal(0, quota.Code);
        Assert.Contains("vehicle quota: 7; vehicles: 0", quota.Output, StringComparison.Ordinal);
        Assert.Equal(7, (await fixture.Client(fleet.AdminKey).GetFromJsonAsync<JsonElement>("/v1/fleet/quota")).GetProperty("max_vehicles").GetInt32());
        Assert.Contains("service default", (await RunAsync("keys", "quota", "--fleet", fleet.Name, "--default")).Output, StringComparison.Ordinal);

        var bad = await RunAsync("keys", "rotate", "--fleet", fleet.Name, "--id", "not-a-uuid");
        Assert.Equal(2, bad.Code);
        Assert.Contains("--id must be a key id", bad.Error, StringComparison.Ordinal);
        Assert.Equal(2, (await RunAsync("keys", "quota", "--fleet", fleet.Name, "--max", "0")).Code);
    }

    private static async Task<WebSocket> OpenBrowserStreamAsync(ServiceFactory host, string key, string path)
    {
        var browser = host.Server.CreateWebSocketClient();
        browser.SubProtocols.Add("fusion.v1");
        browser.SubProtocols.Add("fusion.key." + key);
        return await browser.ConnectAsync(new Uri(host.Server.BaseAddress, path), CancellationToken.None);
    }

    // Reads until the server's close frame (frames before it are skipped) and answers it; its status.
    private static async Task<WebSocketCloseStatus?> CloseStatusAsync(WebSocket socket, TimeSpan timeout)
    {
        using var cancel = new CancellationTokenSource(timeout);
        var buffer = new byte[64 * 1024];
        while (true)
        {
            var received = await socket.ReceiveAsync(buffer, cancel.Token);
            if (received.MessageType == WebSocketMessageType.Close)
            {
                await socket.CloseOutputAsync(WebSocketCloseStatus.NormalClosure, "ok", CancellationToken.None);
                return received.CloseStatus;
            }
        }
    }
}
