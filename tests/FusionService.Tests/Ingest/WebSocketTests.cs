// WebSocket ingest: each frame is acknowledged after the durable commit.
using System.Net.WebSockets;
using System.Text;
using System.Text.Json;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class WebSocketTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Frames_are_acknowledged_with_their_seq_and_counts_after_commit()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-ws", TelemetryDrive.StartUs(TimeSpan.FromMinutes(10)), seed: 81);
        var ws = fixture.Host.Server.CreateWebSocketClient();
        ws.ConfigureRequest = request => request.Headers.Authorization = "Bearer " + fleet.IngestKey;
        using var socket = await ws.ConnectAsync(new Uri(fixture.Host.Server.BaseAddress, "/v1/telemetry/stream"), CancellationToken.None);

        var first = await SendAsync(socket, "{\"seq\":1,\"messages\":" + drive.Body(0, 60) + "}");
        Assert.Equal(1, first.GetProperty("seq").GetInt64());
        Assert.Equal(60, first.GetProperty("accepted").GetInt32());
        Assert.Equal(0, first.GetProperty("rejected").GetArrayLength());
        long stored = await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id);
        Assert.Equal(drive.Messages.Take(60).Sum(m => m.Core.Length), stored);

        string bad = """{"vehicle":"van-ws","kind":"wheel","time":"2001-01-01T00:00:00Z","speed_mps":1}""";
        string mixed = drive.Body(30, 90)[..^1] + "," + bad + "]";
        var second = await SendAsync(socket, "{\"seq\":2,\"messages\":" + mixed + "}");
        Assert.Equal(2, second.GetProperty("seq").GetInt64());
        Assert.Equal(30, second.GetProperty("accepted").GetInt32());
        Assert.Equal(30, second.GetProperty("duplicate").GetInt32());
        var rejected = Assert.Single(second.GetProperty("rejected").EnumerateArray());
        Assert.Equal(60, rejected.GetProperty("index").GetInt32());
        Assert.Equal("time", rejected.GetProperty("field").GetString());

        var broken = await SendAsync(socket, "{\"seq\":3,");
        Assert.StartsWith("frame: not valid JSON", broken.GetProperty("error").GetString(), StringComparison.Ordinal);
        await socket.CloseAsync(WebSocketCloseStatus.NormalClosure, "done", CancellationToken.None);
    }

    private static async Task<JsonElement> SendAsync(WebSocket socket, string frame)
    {
        await socket.SendAsync(Encoding.UTF8.GetBytes(frame), WebSocketMessageType.Text, true, CancellationToken.None);
        var buffer = new byte[1 << 16];
        using var received = new MemoryStream();
        WebSocketReceiveResult result;
        do
        {
            result = await socket.ReceiveAsync(buffer, CancellationToken.None);
            received.Write(buffer, 0, result.Count);
        }
        while (!result.EndOfMessage);
        return JsonDocument.Parse(received.ToArray()).RootElement.Clone();
    }
}
