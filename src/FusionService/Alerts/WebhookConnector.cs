// Opens webhook connections only to allowed addresses, checked after name resolution.
using System.Net;
using System.Net.Sockets;

namespace FusionService.Alerts;

/// <summary>
/// The <see cref="SocketsHttpHandler.ConnectCallback"/> of the webhook client: resolves the host, drops every address
/// the <see cref="WebhookDestinationPolicy"/> refuses, and connects to the first remaining one. The check runs on the
/// address actually connected to, so a name that resolves to a private address (or changes its answer after the
/// subscription was created) is refused too.
/// </summary>
public sealed class WebhookConnector(WebhookDestinationPolicy policy, WebhookHostResolver resolver)
{
    /// <summary>Connects, or throws <see cref="HttpRequestException"/> naming the refused addresses.</summary>
    public async ValueTask<Stream> ConnectAsync(SocketsHttpConnectionContext context, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(context);
        string host = context.DnsEndPoint.Host.Trim('[', ']');
        int port = context.DnsEndPoint.Port;
        IPAddress[] addresses = IPAddress.TryParse(host, out var literal)
            ? [literal]
            : await resolver.ResolveAsync(host, cancellationToken).ConfigureAwait(false);
        var refused = new List<string>();
        SocketException? lastError = null;
        foreach (var address in addresses)
        {
            if (policy.Refusal(address, port) is { } why)
            {
                refused.Add(address + " (" + why + ")");
                continue;
            }

            var socket = new Socket(address.AddressFamily, SocketType.Stream, ProtocolType.Tcp) { NoDelay = true };
            try
            {
                await socket.ConnectAsync(new IPEndPoint(address, port), cancellationToken).ConfigureAwait(false);
                return new NetworkStream(socket, ownsSocket: true);
            }
            catch (SocketException ex)
            {
                socket.Dispose();
                lastError = ex;
            }
            catch
            {
                socket.Dispose();
                throw;
            }
        }

        if (lastError is not null)
        {
            throw new HttpRequestException("cannot connect to " + host + ":" + port.ToString(System.Globalization.CultureInfo.InvariantCulture) + ": " + lastError.Message, lastError);
        }

        throw new HttpRequestException(
            addresses.Length == 0
                ? "destination refused: " + host + " resolves to no address"
                : "destination refused: " + host + " resolves only to refused addresses: " + string.Join(", ", refused));
    }
}
