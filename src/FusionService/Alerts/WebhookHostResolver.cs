// Name resolution for webhook connections.
using System.Net;

namespace FusionService.Alerts;

/// <summary>Resolves a webhook host name to addresses (the system resolver; a test host may register another).</summary>
public class WebhookHostResolver
{
    /// <summary>The addresses of <paramref name="host"/>.</summary>
    public virtual Task<IPAddress[]> ResolveAsync(string host, CancellationToken cancellationToken) =>
        Dns.GetHostAddressesAsync(host, cancellationToken);
}
