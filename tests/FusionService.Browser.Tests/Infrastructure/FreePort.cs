// A TCP port nobody listens on right now.
using System.Net;
using System.Net.Sockets;

namespace FusionService.Browser.Tests.Infrastructure;

internal static class FreePort
{
    public static int Next()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        int port = ((IPEndPoint)listener.LocalEndpoint).Port;
        listener.Stop();
        return port;
    }
}
