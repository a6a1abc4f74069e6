using System.Collections.Concurrent;
using System.Diagnostics;
using System.Net;
using System.Net.WebSockets;
using System.Text;
using System.Text.Json;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;

namespace FusionService.Simulator.Tests.Feeding;

/// <summary>
/// A tiny Kestrel server on 127.0.0.1 (port 0) with the two ingest endpoints, recording what arrives: POST
/// /v1/telemetry answers 200 (or 503 with Retry-After once, or 400 always) and the WebSocket /v1/telemetry/stream
/// acknowledges each frame after a delay, while it keeps reading.
/// </summary>
internal sealed class TestIngestServer : IAsyncDisposable
{
    private readonly WebApplication _app;
    private int _throttlesLeft;
    private int _connections;

    private TestIngestServer(WebApplication app) => _app = app;

    public Uri BaseUrl { get; private set; } = null!;

    public ConcurrentQueue<Post> Posts { get; } = new();

    public ConcurrentQueue<Frame> Frames { get; } = new();

    public ConcurrentDictionary<(int Connection, long Seq), long> AckStartTicks { get; } = new();

    public ConcurrentQueue<string?> SocketAuthorizations { get; } = new();

    public TimeSpan AckDelay { get; init; } = TimeSpan.FromMilliseconds(30);

    public TimeSpan PostDelay { get; init; }

    public bool RefuseAll { get; init; }

    public int RetryAfterS { get; init; } = 1;

    /// <summary>When set, the very first frame is recorded but never acknowledged.</summary>
    public bool DropFirstAck { get; init; }

    private int _framesSeen;

    public static async Task<TestIngestServer> StartAsync(int throttleOnce = 0, TimeSpan? ackDelay = null, TimeSpan? postDelay = null, bool refuseAll = false, bool dropFirstAck = false)
    {
        WebApplicationBuilder builder = WebApplication.CreateSlimBuilder();
        builder.Logging.ClearProviders();
        builder.WebHost.UseKestrel(o => o.Listen(IPAddress.Loopback, 0));
        WebApplication app = builder.Build();
        var server = new TestIngestServer(app)
        {
            AckDelay = ackDelay ?? TimeSpan.FromMilliseconds(30),
            PostDelay = postDelay ?? TimeSpan.Zero,
            RefuseAll = refuseAll,
            DropFirstAck = dropFirstAck,
        };
        server._throttlesLeft = throttleOnce;
        app.UseWebSockets();
        app.MapPost("/v1/telemetry", (Delegate)server.PostAsync);
        app.Map("/v1/telemetry/stream", server.StreamAsync);
        await app.StartAsync();
        string address = app.Services.GetRequiredService<IServer>().Features.Get<IServerAddressesFeature>()!.Addresses.First();
        server.BaseUrl = new Uri(address + "/");
        return server;
    }

    public async ValueTask DisposeAsync()
    {
        await _app.StopAsync();
        await _app.DisposeAsync();
    }

    private async Task<IResult> PostAsync(HttpContext context)
    {
        using var body = new MemoryStream();
        await context.Request.Body.CopyToAsync(body, context.RequestAborted);
        long now = Stopwatch.GetTimestamp();
        int status = RefuseAll ? 400 : Interlocked.Decrement(ref _throttlesLeft) >= 0 ? 503 : 200;
        Posts.Enqueue(new Post(context.Request.Headers.Authorization.ToString(), context.Request.ContentType, body.ToArray(), status, now));
        if (status == 503)
        {
            context.Response.Headers.RetryAfter = RetryAfterS.ToString(System.Globalization.CultureInfo.InvariantCulture);
            return Results.StatusCode(503);
        }

        if (PostDelay > TimeSpan.Zero)
        {
            await Task.Delay(PostDelay, context.RequestAborted);
        }

        return status == 400 ? Results.BadRequest() : Results.Ok();
    }

    private async Task StreamAsync(HttpContext context)
    {
        if (!context.WebSockets.IsWebSocketRequest)
        {
            context.Response.StatusCode = 400;
            return;
        }

        SocketAuthorizations.Enqueue(context.Request.Headers.Authorization.ToString());
        int connection = Interlocked.Increment(ref _connections);
        using WebSocket socket = await context.WebSockets.AcceptWebSocketAsync();
        using var sendLock = new SemaphoreSlim(1, 1);
        var acks = new List<Task>();

        // An unrelated frame first: the client must not take it for an acknowledgement.
        await socket.SendAsync("""{"seq":0,"hello":"unrelated"}"""u8.ToArray(), WebSocketMessageType.Text, true, context.RequestAborted);
        var buffer = new byte[1 << 20];
        while (true)
        {
            int count = 0;
            WebSocketReceiveResult result;
            do
            {
                result = await socket.ReceiveAsync(new ArraySegment<byte>(buffer, count, buffer.Length - count), context.RequestAborted);
                count += result.Count;
            }
            while (!result.EndOfMessage && result.MessageType != WebSocketMessageType.Close);

            if (result.MessageType == WebSocketMessageType.Close)
            {
                await Task.WhenAll(acks);
                await socket.CloseOutputAsync(WebSocketCloseStatus.NormalClosure, "bye", CancellationToken.None);
                return;
            }

            long arrived = Stopwatch.GetTimestamp();
            string text = Encoding.UTF8.GetString(buffer, 0, count);
            using JsonDocument doc = JsonDocument.Parse(text);
            long seq = doc.RootElement.GetProperty("seq").GetInt64();
            string[] messages = [.. doc.RootElement.GetProperty("messages").EnumerateArray().Select(e => e.GetRawText())];
            Frames.Enqueue(new Frame(connection, seq, messages, arrived));
            if (Interlocked.Increment(ref _framesSeen) == 1 && DropFirstAck)
            {
                continue;
            }

            acks.Add(Task.Run(async () =>
            {
                await Task.Delay(AckDelay);
                await sendLock.WaitAsync();
                try
                {
                    AckStartTicks[(connection, seq)] = Stopwatch.GetTimestamp();
                    byte[] ack = Encoding.UTF8.GetBytes($$"""{"seq":{{seq}},"accepted":{{messages.Length}},"note":"opaque"}""");
                    await socket.SendAsync(ack, WebSocketMessageType.Text, true, CancellationToken.None);
                }
                finally
                {
                    sendLock.Release();
                }
            }));
        }
    }

    public sealed record Post(string Authorization, string? ContentType, byte[] Body, int Status, long ArrivedTicks);

    public sealed record Frame(int Connection, long Seq, string[] Messages, long ArrivedTicks);
}
