// Signed webhook deliveries from the durable outbox: retried after failures, and across a service restart.
using System.Globalization;
using System.Net.Http.Json;
using System.Security.Cryptography;
using System.Text;
using System.Text.Json;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Alerts;

[Collection(ServiceTests.Name)]
public sealed class WebhookDeliveryTests(ServiceFixture fixture)
{
    internal const string Secret = "whsec-0123456789abcdef";

    internal static readonly Dictionary<string, string?> Dispatching = new(StringComparer.Ordinal)
    {
        ["Webhooks:DispatcherEnabled"] = "true",
        ["Webhooks:BaseDelayS"] = "0.5",
        ["Webhooks:MaxDelayS"] = "2",
        ["Webhooks:TimeoutS"] = "5",
        ["Webhooks:LeaseS"] = "10",

        // The receiver is a plain-http listener on loopback, which the service refuses unless told otherwise.
        ["Webhooks:AllowHttp"] = "true",
        ["Webhooks:AllowedNetworks:0"] = "127.0.0.0/8",
    };

    [Fact]
    public async Task Delivery_is_signed_and_retried_after_a_500()
    {
        var fleet = await fixture.NewFleetAsync();
        using var receiver = new WebhookReceiver { Status = n => n == 1 ? 500 : 200 };
        await using var host = new ServiceFactory(fixture.ConnectionString, Dispatching);
        await SubscribeAsync(fixture.Client(fleet.AdminKey, host), receiver.Url);
        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey, host), AlertDrive.WithJumps("van-hook", seed: 403));

        var requests = await receiver.WaitForAsync(r => r.Any(x => x.AnsweredStatus == 200), TimeSpan.FromSeconds(40));
        Assert.Equal(2, requests.Length);
        Assert.Equal(500, requests[0].AnsweredStatus);
        Assert.Equal(requests[0].Id, requests[1].Id);
        Assert.Equal(requests[0].Body, requests[1].Body);
        foreach (var r in requests)
        {
            AssertSigned(r);
        }

        var alert = JsonDocument.Parse(requests[1].Body).RootElement;
        Assert.Equal("gated_burst", alert.GetProperty("kind").GetString());
        Assert.Equal("van-hook", alert.GetProperty("vehicle").GetString());
        Assert.Equal(fleet.Id, alert.GetProperty("fleet_id").GetGuid());
        // The service marks the row delivered after it has read the receiver's 200, which the receiver records first: the
        // row is waited for (a clean-clone CI run read it a moment too early), then its attempts counted.
        var deliveryId = Guid.Parse(requests[0].Id!);
        const string Delivered = "SELECT count(*) FROM webhook_outbox WHERE delivery_id = $1 AND delivered_at IS NOT NULL";
        var deadline = DateTime.UtcNow.AddSeconds(20);
        while (await fixture.CountAsync(Delivered, deliveryId) == 0)
        {
            Assert.True(DateTime.UtcNow < deadline, "the delivery was not marked delivered within 20 s of its 200");
            await Task.Delay(100);
        }

        Assert.Equal(2, await fixture.CountAsync("SELECT attempts FROM webhook_outbox WHERE delivery_id = $1 AND delivered_at IS NOT NULL AND last_error IS NULL", deliveryId));
    }

    [Fact]
    public async Task Pending_delivery_survives_a_restart_and_replay_raises_no_duplicate()
    {
        var fleet = await fixture.NewFleetAsync();
        using var receiver = new WebhookReceiver { Status = _ => 500 };
        var drive = AlertDrive.WithJumps("van-restart-hook", seed: 404);
        int half = drive.Messages.Count * 3 / 4;
        await using (var first = new ServiceFactory(fixture.ConnectionString, Dispatching))
        {
            await SubscribeAsync(fixture.Client(fleet.AdminKey, first), receiver.Url);
            await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey, first), drive, 0, half);
            await receiver.WaitForAsync(r => r.Length >= 1, TimeSpan.FromSeconds(40));
        }

        int beforeRestart = receiver.Requests.Count;
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE fleet_id = $1 AND delivered_at IS NULL AND attempts >= 1", fleet.Id));
        receiver.Status = _ => 200;
        var restartedAt = DateTimeOffset.UtcNow;
        await using var second = new ServiceFactory(fixture.ConnectionString, Dispatching);
        // The rest of the drive activates the track again, which re-processes the stored jumps.
        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey, second), drive, half);
        var requests = await receiver.WaitForAsync(r => r.Any(x => x.AnsweredStatus == 200), TimeSpan.FromSeconds(40));
        var delivered = requests.Single(r => r.AnsweredStatus == 200);
        Assert.True(delivered.At >= restartedAt);
        Assert.True(requests.Length > beforeRestart);
        AssertSigned(delivered);
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM alerts WHERE fleet_id = $1 AND kind = 'gated_burst'", fleet.Id));
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE fleet_id = $1", fleet.Id));
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM webhook_outbox WHERE fleet_id = $1 AND delivered_at IS NOT NULL", fleet.Id));
        var list = await fixture.Client(fleet.ReadKey, second).GetFromJsonAsync<JsonElement>("/v1/alerts?kind=gated_burst");
        Assert.Equal(3, list.GetProperty("alerts")[0].GetProperty("count").GetInt32());
    }

    internal static async Task SubscribeAsync(HttpClient admin, string url)
    {
        using var response = await admin.PostAsJsonAsync("/v1/webhooks", new { url, secret = Secret });
        Assert.Equal(System.Net.HttpStatusCode.Created, response.StatusCode);
    }

    // HMAC-SHA256 (RFC 2104 / FIPS 198-1) computed here with .NET's HMACSHA256, independently of the service's signer, over
    // the signed string documented in docs/api-alerts.md: "<delivery id>\n<timestamp>\n<body>".
    internal static void AssertSigned(WebhookReceiver.Received r, string secret = Secret)
    {
        Assert.NotNull(r.Id);
        Assert.NotNull(r.Timestamp);
        long unix = long.Parse(r.Timestamp!, NumberStyles.Integer, CultureInfo.InvariantCulture);
        Assert.InRange(unix, DateTimeOffset.UtcNow.AddMinutes(-5).ToUnixTimeSeconds(), DateTimeOffset.UtcNow.AddMinutes(1).ToUnixTimeSeconds());
        using var hmac = new HMACSHA256(Encoding.UTF8.GetBytes(secret));
        string expected = "hmac-sha256=" + Convert.ToHexStringLower(hmac.ComputeHash(Encoding.UTF8.GetBytes(r.Id + "\n" + r.Timestamp + "\n" + r.Body)));
        Assert.Equal(expected, r.Signature);

        // Issue 15: every delivery carries the cautions, as a header and in the payload.
        Assert.Contains("collision avoidance", r.Caution, StringComparison.Ordinal);
        Assert.Contains("personal data", System.Text.Json.JsonDocument.Parse(r.Body).RootElement.GetProperty("caution").GetString(), StringComparison.Ordinal);
    }
}
