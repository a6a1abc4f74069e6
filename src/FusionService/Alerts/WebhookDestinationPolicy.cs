// Which network destinations a webhook may reach.
using System.Globalization;
using System.Net;
using System.Net.NetworkInformation;
using System.Net.Sockets;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.Extensions.Options;

namespace FusionService.Alerts;

/// <summary>
/// Decides whether a webhook may connect to an address and port. Refused: loopback, unspecified, link-local, private
/// (RFC 1918, RFC 4193, RFC 6598), multicast and reserved addresses unless inside <see cref="WebhookOptions.AllowedNetworks"/>,
/// and always the service's own listening address and port (a wildcard listener counts every local interface address).
/// IPv4-mapped and NAT64 (64:ff9b::/96, RFC 6052) IPv6 addresses are judged by the IPv4 address inside.
/// </summary>
public sealed class WebhookDestinationPolicy
{
    // IPv4 ranges: RFC 1122 section 3.2.1.3 (0/8, 127/8), RFC 1918 (private), RFC 6598 (shared address space),
    // RFC 3927 (link-local), RFC 5771 (multicast), RFC 1112 section 4 and RFC 919 (240/4 reserved, broadcast).
    // IPv6: RFC 4291 section 2.5.2-2.5.6 and 2.7 (unspecified, loopback, link-local, multicast), RFC 3879 (site-local,
    // deprecated), RFC 4193 (unique local).
    private static readonly (IPNetwork Network, string Why)[] Refused =
    [
        (IPNetwork.Parse("0.0.0.0/8"), "unspecified"),
        (IPNetwork.Parse("10.0.0.0/8"), "private"),
        (IPNetwork.Parse("100.64.0.0/10"), "private (shared address space)"),
        (IPNetwork.Parse("127.0.0.0/8"), "loopback"),
        (IPNetwork.Parse("169.254.0.0/16"), "link-local"),
        (IPNetwork.Parse("172.16.0.0/12"), "private"),
        (IPNetwork.Parse("192.168.0.0/16"), "private"),
        (IPNetwork.Parse("224.0.0.0/4"), "multicast"),
        (IPNetwork.Parse("240.0.0.0/4"), "reserved or broadcast"),
        (IPNetwork.Parse("::/128"), "unspecified"),
        (IPNetwork.Parse("::1/128"), "loopback"),
        (IPNetwork.Parse("fe80::/10"), "link-local"),
        (IPNetwork.Parse("fec0::/10"), "site-local"),
        (IPNetwork.Parse("fc00::/7"), "private (unique local)"),
        (IPNetwork.Parse("ff00::/8"), "multicast"),
    ];

    private static readonly IPNetwork Nat64 = IPNetwork.Parse("64:ff9b::/96");

    private readonly IPNetwork[] _allowed;
    private readonly IServer? _server;

    /// <summary>Creates the policy from the options; <paramref name="server"/> tells the service's own listening addresses.</summary>
    /// <exception cref="OptionsValidationException">An entry of <see cref="WebhookOptions.AllowedNetworks"/> is not CIDR notation.</exception>
    public WebhookDestinationPolicy(IOptions<WebhookOptions> options, IServer? server = null)
    {
        ArgumentNullException.ThrowIfNull(options);
        var allowed = new List<IPNetwork>();
        foreach (var text in options.Value.AllowedNetworks)
        {
            if (!IPNetwork.TryParse(text, out var network))
            {
                throw new OptionsValidationException(
                    WebhookOptions.Section, typeof(WebhookOptions), ["Webhooks:AllowedNetworks: '" + text + "' is not a network in CIDR notation, e.g. 127.0.0.0/8"]);
            }

            allowed.Add(network);
        }

        _allowed = [.. allowed];
        _server = server;
    }

    /// <summary>Why <paramref name="address"/> is refused by the range rules (ignoring the allowed networks), or null.</summary>
    public static string? RefusedRange(IPAddress address)
    {
        ArgumentNullException.ThrowIfNull(address);
        var a = Normalize(address);
        foreach (var (network, why) in Refused)
        {
            if (network.BaseAddress.AddressFamily == a.AddressFamily && network.Contains(a))
            {
                return why;
            }
        }

        return null;
    }

    /// <summary>Why a connection to <paramref name="address"/>:<paramref name="port"/> is refused, or null when it is allowed.</summary>
    public string? Refusal(IPAddress address, int port)
    {
        ArgumentNullException.ThrowIfNull(address);
        var a = Normalize(address);
        if (IsOwnEndpoint(a, port))
        {
            return "this service's own listening address and port";
        }

        if (RefusedRange(a) is not { } why)
        {
            return null;
        }

        foreach (var network in _allowed)
        {
            if (network.BaseAddress.AddressFamily == a.AddressFamily && network.Contains(a))
            {
                return null;
            }
        }

        return why;
    }

    private static IPAddress Normalize(IPAddress address)
    {
        if (address.IsIPv4MappedToIPv6)
        {
            return address.MapToIPv4();
        }

        if (address.AddressFamily == AddressFamily.InterNetworkV6 && Nat64.Contains(address))
        {
            return new IPAddress(address.GetAddressBytes()[12..]);
        }

        return address;
    }

    private bool IsOwnEndpoint(IPAddress address, int port)
    {
        var listening = _server?.Features.Get<IServerAddressesFeature>()?.Addresses;
        if (listening is null)
        {
            return false;
        }

        foreach (var text in listening)
        {
            if (!TryParseListener(text, out var host, out int listenPort) || listenPort != port)
            {
                continue;
            }

            if (IPAddress.TryParse(host, out var bound) && !bound.Equals(IPAddress.Any) && !bound.Equals(IPAddress.IPv6Any))
            {
                if (Normalize(bound).Equals(address) || (IPAddress.IsLoopback(bound) && IPAddress.IsLoopback(address)))
                {
                    return true;
                }

                continue;
            }

            // A wildcard or named listener ("[::]", "0.0.0.0", "*", "+", "localhost") answers on every local address.
            if (IPAddress.IsLoopback(address) || LocalAddresses().Contains(address))
            {
                return true;
            }
        }

        return false;
    }

    private static bool TryParseListener(string text, out string host, out int port)
    {
        host = string.Empty;
        port = 0;
        int scheme = text.IndexOf("://", StringComparison.Ordinal);
        string rest = scheme >= 0 ? text[(scheme + 3)..] : text;
        int slash = rest.IndexOf('/', StringComparison.Ordinal);
        if (slash >= 0)
        {
            rest = rest[..slash];
        }

        int colon = rest.LastIndexOf(':');
        if (colon <= 0 || !int.TryParse(rest[(colon + 1)..], NumberStyles.None, CultureInfo.InvariantCulture, out port))
        {
            return false;
        }

        host = rest[..colon].Trim('[', ']');
        return true;
    }

    private static HashSet<IPAddress> LocalAddresses()
    {
        var set = new HashSet<IPAddress>();
        try
        {
            foreach (var nic in NetworkInterface.GetAllNetworkInterfaces())
            {
                foreach (var unicast in nic.GetIPProperties().UnicastAddresses)
                {
                    set.Add(Normalize(unicast.Address));
                }
            }
        }
        catch (NetworkInformationException)
        {
            // Without the interface list only loopback is recognised as local.
        }

        return set;
    }
}
