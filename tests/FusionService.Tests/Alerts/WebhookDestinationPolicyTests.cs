// Which addresses a webhook may reach: the special-purpose ranges of the IETF registries, allowed networks, own listeners.
using System.Net;
using FusionService.Alerts;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.AspNetCore.Http.Features;
using Microsoft.Extensions.Options;

namespace FusionService.Tests.Alerts;

public sealed class WebhookDestinationPolicyTests
{
    // Each range with the document that assigns it (published; the ranges are also in the IANA IPv4 and IPv6
    // Special-Purpose Address Registries, RFC 6890).
    [Theory]
    [InlineData("127.0.0.1", "loopback")] // RFC 1122 section 3.2.1.3
    [InlineData("127.255.255.254", "loopback")] // RFC 1122 section 3.2.1.3 (all of 127/8)
    [InlineData("0.0.0.0", "unspecified")] // RFC 1122 section 3.2.1.3
    [InlineData("10.1.2.3", "private")] // RFC 1918
    [InlineData("172.16.0.1", "private")] // RFC 1918
    [InlineData("172.31.255.255", "private")] // RFC 1918 (172.16/12 ends here)
    [InlineData("192.168.1.10", "private")] // RFC 1918
    [InlineData("100.64.0.1", "private (shared address space)")] // RFC 6598
    [InlineData("169.254.169.254", "link-local")] // RFC 3927
    [InlineData("224.0.0.1", "multicast")] // RFC 5771
    [InlineData("239.255.255.250", "multicast")] // RFC 5771
    [InlineData("255.255.255.255", "reserved or broadcast")] // RFC 919 (limited broadcast), RFC 1112 (240/4)
    [InlineData("::1", "loopback")] // RFC 4291 section 2.5.3
    [InlineData("::", "unspecified")] // RFC 4291 section 2.5.2
    [InlineData("fe80::1", "link-local")] // RFC 4291 section 2.5.6
    [InlineData("fd12:3456:789a::1", "private (unique local)")] // RFC 4193
    [InlineData("ff02::1", "multicast")] // RFC 4291 section 2.7
    [InlineData("::ffff:127.0.0.1", "loopback")] // RFC 4291 section 2.5.5.2: IPv4-mapped, judged by the IPv4 address
    [InlineData("64:ff9b::a00:1", "private")] // RFC 6052 section 2.1: NAT64 prefix embedding 10.0.0.1
    public void Issue14_special_purpose_addresses_are_refused(string address, string why)
    {
        Assert.Equal(why, WebhookDestinationPolicy.RefusedRange(IPAddress.Parse(address)));
        Assert.Equal(why, Policy().Refusal(IPAddress.Parse(address), 443));
    }

    [Theory]
    [InlineData("172.32.0.1")] // just above 172.16/12 (RFC 1918)
    [InlineData("100.128.0.1")] // just above 100.64/10 (RFC 6598)
    [InlineData("192.0.2.10")] // TEST-NET-1 (RFC 5737): not special here, a globally routed stand-in
    [InlineData("2001:db8::1")] // documentation prefix (RFC 3849), stands in for a global IPv6 address
    public void Issue14_global_addresses_are_allowed(string address)
    {
        Assert.Null(Policy().Refusal(IPAddress.Parse(address), 443));
    }

    [Fact]
    public void Issue14_allowed_networks_open_a_range_but_never_the_services_own_listener()
    {
        var policy = Policy(["127.0.0.0/8"], "http://127.0.0.1:5080");
        Assert.Null(policy.Refusal(IPAddress.Parse("127.0.0.1"), 5081));
        Assert.Equal("this service's own listening address and port", policy.Refusal(IPAddress.Parse("127.0.0.1"), 5080));
        Assert.Equal("private", policy.Refusal(IPAddress.Parse("10.0.0.1"), 5081));

        // A wildcard listener answers on every local address, loopback included.
        var wildcard = Policy(["127.0.0.0/8"], "http://[::]:5090");
        Assert.Equal("this service's own listening address and port", wildcard.Refusal(IPAddress.Parse("127.0.0.1"), 5090));
        Assert.Equal("this service's own listening address and port", wildcard.Refusal(IPAddress.Parse("::1"), 5090));
        Assert.Null(wildcard.Refusal(IPAddress.Parse("127.0.0.1"), 5091));
    }

    [Fact]
    public void Issue14_an_allowed_network_that_is_not_cidr_fails_at_start_naming_the_option()
    {
        var ex = Assert.Throws<OptionsValidationException>(() => Policy(["localhost"]));
        Assert.Contains("Webhooks:AllowedNetworks: 'localhost'", ex.Message, StringComparison.Ordinal);
    }

    private static WebhookDestinationPolicy Policy(string[]? allowed = null, string? listening = null)
    {
        var options = new WebhookOptions();
        foreach (var network in allowed ?? [])
        {
            options.AllowedNetworks.Add(network);
        }

        return new WebhookDestinationPolicy(Options.Create(options), listening is null ? null : new ListeningServer(listening));
    }

    private sealed class ListeningServer : IServer
    {
        public ListeningServer(string address)
        {
            var addresses = new ServerAddressesFeature();
            addresses.Addresses.Add(address);
            Features.Set<IServerAddressesFeature>(addresses);
        }

        public IFeatureCollection Features { get; } = new FeatureCollection();

        public void Dispose()
        {
        }

        public Task StartAsync<TContext>(IHttpApplication<TContext> application, CancellationToken cancellationToken)
            where TContext : notnull => Task.CompletedTask;

        public Task StopAsync(CancellationToken cancellationToken) => Task.CompletedTask;
    }
}
