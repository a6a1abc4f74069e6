// Sends a subscription's frames over a WebSocket until either side closes.
using System.Net.WebSockets;
using System.Text.Json;
using System.Threading.Channels;
using FusionService.Alerts;

namespace FusionService.Live;

/// <summary>
/// Pumps frames from a hub subscription to a WebSocket, one JSON object per text frame; when <c>keyLost</c> fires (the
/// stream's API key was revoked or expired) the socket is closed with 1008 (policy violation).
/// </summary>
internal static class LiveStreaming
{
    /// <summary>How long a client may take to answer the close frame sent after its key was lost.</summary>
    private static readonly TimeSpan CloseLinger = TimeSpan.FromSeconds(5);

    public static async Task PumpAsync<T>(WebSocket socket, ChannelReader<T> frames, CancellationToken aborted, CancellationToken keyLost)
    {
        using var stop = CancellationTokenSource.CreateLinkedTokenSource(aborted);
        var receiving = ReceiveUntilCloseAsync(socket, stop);
        using var reading = CancellationTokenSource.CreateLinkedTokenSource(stop.Token, keyLost);
        try
        {
            await foreach (var frame in frames.ReadAllAsync(reading.Token).ConfigureAwait(false))
            {
                await socket.SendAsync(JsonSerializer.SerializeToUtf8Bytes(frame, AlertJson.Options), WebSocketMessageType.Text, true, stop.Token).ConfigureAwait(false);
            }
        }
        catch (OperationCanceledException)
        {
            // The client closed the socket or the request was aborted.
        }
        catch (WebSocketException)
        {
            // The connection broke.
        }

        if (keyLost.IsCancellationRequested && !stop.IsCancellationRequested && socket.State == WebSocketState.Open)
        {
            try
            {
                await socket.CloseOutputAsync(WebSocketCloseStatus.PolicyViolation, "API key revoked or expired", CancellationToken.None).ConfigureAwait(false);
                await receiving.WaitAsync(CloseLinger, CancellationToken.None).ConfigureAwait(false);
            }
            catch (Exception ex) when (ex is WebSocketException or TimeoutException or ObjectDisposedException)
            {
                // The client did not answer the close in time, or the connection broke.
            }
        }

        await stop.CancelAsync().ConfigureAwait(false);
        await receiving.ConfigureAwait(false);
        if (socket.State is WebSocketState.Open or WebSocketState.CloseReceived)
        {
            try
            {
                await socket.CloseOutputAsync(WebSocketCloseStatus.NormalClosure, "bye", CancellationToken.None).ConfigureAwait(false);
            }
            catch (WebSocketException)
            {
                // Already gone.
            }
        }
    }

    private static async Task ReceiveUntilCloseAsync(WebSocket socket, CancellationTokenSource stop)
    {
        var buffer = new byte[1024];
        try
        {
            while (socket.State == WebSocketState.Open)
            {
                var received = await socket.ReceiveAsync(buffer, stop.Token).ConfigureAwait(false);
                if (received.MessageType == WebSocketMessageType.Close)
                {
                    break;
                }
            }
        }
        catch (OperationCanceledException)
        {
            return;
        }
        catch (WebSocketException)
        {
            // The connection broke: stop sending.
        }

        await stop.CancelAsync().ConfigureAwait(false);
    }
}
