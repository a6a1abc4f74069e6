// WebSocket streams: new alerts of the caller's fleet, fused positions within a box and throttled per vehicle.
using System.Globalization;
using System.Net.WebSockets;
using System.Text.Json;
using FusionService.Scenarios;
using FusionService.Tests.Infrastructure;
using Microsoft.AspNetCore.TestHost;

namespace FusionService.Tests.Alerts;

[Collection(ServiceTests.Name)]
public sealed class LiveStreamTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Alert_stream_authenticated_by_subprotocol_receives_the_new_alert_and_other_fleets_do_not()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        var browser = fixture.Host.Server.CreateWebSocketClient();
        browser.SubProtocols.Add("fusion.v1");
        browser.SubProtocols.Add("fusion.key." + fleet.ReadKey);
        using var socket = await browser.ConnectAsync(new Uri(fixture.Host.Server.BaseAddress, "/v1/alerts/stream"), CancellationToken.None);
        Assert.Equal("fusion.v1", socket.SubProtocol);
        using var otherSocket = await Connect(other.ReadKey, "/v1/alerts/stream");

        await AlertDrive.IngestAsync(fixture.Client(fleet.IngestKey), AlertDrive.WithJumps("van-ws-alert", seed: 405));
        JsonElement? frame;
        do
        {
            // Other kinds may come first; the test looks for the burst of jumped fixes.
            frame = await ReceiveAsync(socket, TimeSpan.FromSeconds(30));
            Assert.NotNull(frame);
        }
        while (frame.Value.GetProperty("kind").GetString() != "gated_burst");
        Assert.Equal("gated_burst", frame.Value.GetProperty("kind").GetString());
        Assert.Equal("van-ws-alert", frame.Value.GetProperty("vehicle").GetString());
        Assert.Equal(fleet.Id, frame.Value.GetProperty("fleet_id").GetGuid());
        Assert.Null(await ReceiveAsync(otherSocket, TimeSpan.FromSeconds(2)));
    }

    [Fact]
    public async Task Streams_refuse_unknown_keys_and_ingest_keys()
    {
        var fleet = await fixture.NewFleetAsync();
        var browser = fixture.Host.Server.CreateWebSocketClient();
        browser.SubProtocols.Add("fusion.v1");
        browser.SubProtocols.Add("fusion.key.fsk_not-a-key");
        var refused = await Assert.ThrowsAnyAsync<Exception>(() => browser.ConnectAsync(new Uri(fixture.Host.Server.BaseAddress, "/v1/positions/stream"), CancellationToken.None));
        Assert.Contains("401", refused.Message, StringComparison.Ordinal);
        var forbidden = await Assert.ThrowsAnyAsync<Exception>(() => Connect(fleet.IngestKey, "/v1/alerts/stream"));
        Assert.Contains("403", forbidden.Message, StringComparison.Ordinal);
        var badBox = await Assert.ThrowsAnyAsync<Exception>(() => Connect(fleet.ReadKey, "/v1/positions/stream?bbox=1,2,3"));
        Assert.Contains("400", badBox.Message, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Positions_stream_respects_the_box_the_throttle_and_the_fleet()
    {
        var fleet = await fixture.NewFleetAsync();
        var other = await fixture.NewFleetAsync();
        // The drive starts at the invented place (RouteDriverOptions defaults: InventedPlace, 46.12 N, 170.47 E) and runs
        // 220 m east first; the box holds its first ~110 m. One degree of longitude at latitude phi is (pi/180) N(phi) cos(phi),
        // N the prime-vertical radius of the WGS-84 ellipsoid (a = 6378137 m, 1/f = 298.257223563; NIMA TR8350.2):
        // 77,295.7 m at 46.12 N (derived); one degree of latitude there is about 111,154 m, so +-0.001 deg is +-111 m.
        const double LatDeg = InventedPlace.LatitudeDeg, LonDeg = InventedPlace.LongitudeDeg;
        const double BoxEastDeg = 110.0 / 77_295.7;
        string box = string.Create(CultureInfo.InvariantCulture, $"{LonDeg - 0.001:0.000000},{LatDeg - 0.001:0.000000},{LonDeg + BoxEastDeg:0.000000},{LatDeg + 0.001:0.000000}");
        using var throttled = await Connect(fleet.ReadKey, "/v1/positions/stream?min_interval_ms=5000");
        using var boxed = await Connect(fleet.ReadKey, "/v1/positions/stream?min_interval_ms=0&bbox=" + box);
        using var otherFleet = await Connect(other.ReadKey, "/v1/positions/stream?min_interval_ms=0");

        var drive = TelemetryDrive.Create("van-live", TelemetryDrive.StartUs(TimeSpan.FromMinutes(10)), seed: 406);
        using var ingest = fixture.Client(fleet.IngestKey);
        // One batch per second of data, so each batch can publish one position.
        var seconds = drive.Messages.Select((m, i) => (i, second: TimeOf(m.Message) / 1_000_000)).GroupBy(x => x.second).Select(g => (g.First().i, g.Last().i + 1)).ToList();
        foreach (var (from, to) in seconds)
        {
            await ingest.IngestOkAsync(drive.Body(from, to));
        }

        var slow = await ReceiveAllAsync(throttled, TimeSpan.FromSeconds(3));
        var inBox = await ReceiveAllAsync(boxed, TimeSpan.FromSeconds(1));
        Assert.True(slow.Count >= 10, "throttled frames: " + slow.Count.ToString(CultureInfo.InvariantCulture));
        var times = slow.Select(f => f.GetProperty("time").GetDateTimeOffset()).ToList();
        for (int i = 1; i < times.Count; i++)
        {
            Assert.True((times[i] - times[i - 1]).TotalMilliseconds >= 5000, $"frames {i - 1} and {i} are {(times[i] - times[i - 1]).TotalMilliseconds} ms apart");
        }

        var first = slow[0];
        Assert.Equal("van-live", first.GetProperty("vehicle").GetString());
        Assert.InRange(first.GetProperty("heading_deg").GetDouble(), 0.0, 360.0);
        Assert.True(first.GetProperty("ellipse95").GetProperty("semi_major_m").GetDouble() > 0);
        Assert.NotEmpty(inBox);
        Assert.All(inBox, f => Assert.InRange(f.GetProperty("lon_deg").GetDouble(), LonDeg - 0.001, LonDeg + BoxEastDeg));
        Assert.All(inBox, f => Assert.InRange(f.GetProperty("lat_deg").GetDouble(), LatDeg - 0.001, LatDeg + 0.001));
        Assert.True(slow.Max(f => f.GetProperty("lon_deg").GetDouble()) > LonDeg + BoxEastDeg, "the drive must leave the box for the test to mean anything");
        Assert.Empty(await ReceiveAllAsync(otherFleet, TimeSpan.FromSeconds(1)));
    }

    private static long TimeOf(System.Text.Json.Nodes.JsonObject message)
    {
        var t = message["time"]!;
        return t.GetValueKind() == JsonValueKind.String
            ? (DateTimeOffset.Parse(t.GetValue<string>(), CultureInfo.InvariantCulture).UtcTicks - DateTime.UnixEpoch.Ticks) / 10
            : t.GetValue<long>() * 1000;
    }

    private async Task<WebSocket> Connect(string key, string path)
    {
        var client = fixture.Host.Server.CreateWebSocketClient();
        client.ConfigureRequest = request => request.Headers.Authorization = "Bearer " + key;
        return await client.ConnectAsync(new Uri(fixture.Host.Server.BaseAddress, path), CancellationToken.None);
    }

    private static async Task<List<JsonElement>> ReceiveAllAsync(WebSocket socket, TimeSpan quiet)
    {
        var frames = new List<JsonElement>();
        while (await ReceiveAsync(socket, quiet) is { } frame)
        {
            frames.Add(frame);
        }

        return frames;
    }

    private static async Task<JsonElement?> ReceiveAsync(WebSocket socket, TimeSpan timeout)
    {
        if (socket.State != WebSocketState.Open)
        {
            return null;
        }

        using var cancel = new CancellationTokenSource(timeout);
        var buffer = new byte[1 << 16];
        using var received = new MemoryStream();
        try
        {
            WebSocketReceiveResult result;
            do
            {
                result = await socket.ReceiveAsync(buffer, cancel.Token);
                received.Write(buffer, 0, result.Count);
            }
            while (!result.EndOfMessage);
            return result.MessageType == WebSocketMessageType.Text ? JsonDocument.Parse(received.ToArray()).RootElement.Clone() : null;
        }
        catch (OperationCanceledException)
        {
            return null;
        }
    }
}
