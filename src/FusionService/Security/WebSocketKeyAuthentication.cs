// API-key authentication for WebSocket streams opened by browsers (which cannot set headers).
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.Features;

namespace FusionService.Security;

/// <summary>
/// Authentication of the WebSocket streams: the <c>Authorization: Bearer</c> header as everywhere, or, for browsers
/// (whose WebSocket API cannot set headers), the subprotocol list <c>fusion.v1, fusion.key.&lt;secret&gt;</c> in
/// <c>Sec-WebSocket-Protocol</c> (RFC 6455 section 1.9). The server then selects <c>fusion.v1</c>, never echoing the
/// key. The header wins when both are present. Either way the open counts against the resolved key's and fleet's request
/// limits, like any other request of that key.
/// </summary>
public static class WebSocketKeyAuthentication
{
    /// <summary>The subprotocol the server selects.</summary>
    public const string Protocol = "fusion.v1";

    /// <summary>Prefix of the subprotocol carrying the key.</summary>
    public const string KeyPrefix = "fusion.key.";

    /// <summary>Requires an API key with one of <paramref name="roles"/> from the header or the subprotocol list.</summary>
    public static TBuilder RequireStreamKey<TBuilder>(this TBuilder builder, params ApiKeyRole[] roles)
        where TBuilder : IEndpointConventionBuilder
    {
        builder.AddEndpointFilter(async (context, next) =>
        {
            var http = context.HttpContext;
            if (string.IsNullOrEmpty(http.Request.Headers.Authorization.ToString()) && KeyFromSubprotocol(http) is { } secret)
            {
                http.Request.Headers.Authorization = "Bearer " + secret;
            }

            return await ApiKeyFilter.AuthenticateAsync(http, roles).ConfigureAwait(false) ?? await next(context).ConfigureAwait(false);
        });
        builder.WithTooManyRequests();
        return builder;
    }

    /// <summary>The accept context: selects <see cref="Protocol"/> when the client offered it, no subprotocol otherwise.</summary>
    public static WebSocketAcceptContext AcceptContext(HttpContext http)
    {
        ArgumentNullException.ThrowIfNull(http);
        bool offered = http.WebSockets.WebSocketRequestedProtocols.Contains(Protocol, StringComparer.Ordinal);
        return new WebSocketAcceptContext { SubProtocol = offered ? Protocol : null };
    }

    private static string? KeyFromSubprotocol(HttpContext http)
    {
        if (http.Features.Get<IHttpWebSocketFeature>() is not { IsWebSocketRequest: true })
        {
            return null;
        }

        foreach (var protocol in http.WebSockets.WebSocketRequestedProtocols)
        {
            if (protocol.StartsWith(KeyPrefix, StringComparison.Ordinal) && protocol.Length > KeyPrefix.Length)
            {
                return protocol[KeyPrefix.Length..];
            }
        }

        return null;
    }
}
