// Hand-written HTTP/1.1 requests over a plain socket, for what HttpClient will not send (short bodies, bad chunks).
using System.Net.Sockets;
using System.Text;

namespace FusionService.Tests.Hostile;

/// <summary>Sends raw request bytes to a loopback port and reads the status code of the answer.</summary>
internal static class RawHttp
{
    /// <summary>
    /// Sends <paramref name="head"/> then <paramref name="body"/> (optionally closing the sending side afterwards) and
    /// returns the answer's status code, or null when the connection was dropped before a status line arrived.
    /// </summary>
    public static async Task<int?> SendAsync(int port, string head, ReadOnlyMemory<byte> body, bool halfClose, TimeSpan timeout)
    {
        using var client = new TcpClient();
        using var cancel = new CancellationTokenSource(timeout);
        await client.ConnectAsync(System.Net.IPAddress.Loopback, port, cancel.Token);
        var stream = client.GetStream();
        var reading = ReadStatusAsync(stream, cancel.Token);
        try
        {
            await stream.WriteAsync(Encoding.UTF8.GetBytes(head), cancel.Token);
            for (int offset = 0; offset < body.Length; offset += 64 * 1024)
            {
                await stream.WriteAsync(body[offset..Math.Min(body.Length, offset + (64 * 1024))], cancel.Token);
            }

            if (halfClose)
            {
                client.Client.Shutdown(SocketShutdown.Send);
            }
        }
        catch (IOException)
        {
            // The server answered early (e.g. 413) and closed: the answer is still read below.
        }

        return await reading;
    }

    private static async Task<int?> ReadStatusAsync(NetworkStream stream, CancellationToken cancel)
    {
        var buffer = new byte[4096];
        var text = new StringBuilder();
        try
        {
            while (!text.ToString().Contains("\r\n", StringComparison.Ordinal))
            {
                int read = await stream.ReadAsync(buffer, cancel);
                if (read == 0)
                {
                    return null;
                }

                text.Append(Encoding.ASCII.GetString(buffer, 0, read));
            }
        }
        catch (Exception ex) when (ex is IOException or OperationCanceledException or SocketException)
        {
            if (!text.ToString().Contains("\r\n", StringComparison.Ordinal))
            {
                return null;
            }
        }

        string line = text.ToString()[..text.ToString().IndexOf("\r\n", StringComparison.Ordinal)];
        string[] parts = line.Split(' ');
        return parts.Length >= 2 && int.TryParse(parts[1], System.Globalization.CultureInfo.InvariantCulture, out int status) ? status : null;
    }
}
