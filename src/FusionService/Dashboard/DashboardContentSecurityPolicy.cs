// The Content-Security-Policy the dashboard's files are served with.
namespace FusionService.Dashboard;

/// <summary>
/// Builds the dashboard's Content-Security-Policy (W3C CSP Level 3): scripts, styles, fonts and API calls only from the
/// service itself, no plugins, no inline scripts, and <c>frame-ancestors 'none'</c> so that no other site can frame
/// the page (clickjacking). Images may also come from the origin of the configured map tiles.
/// </summary>
public static class DashboardContentSecurityPolicy
{
    /// <summary>The policy for <paramref name="options"/>.</summary>
    public static string For(DashboardOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        string images = "'self' data:";
        if (TileSource(options.TileUrlTemplate) is { } tiles)
        {
            images += " " + tiles;
        }

        // connect-src 'self' covers the service's own ws: and wss: addresses (CSP Level 3, 'self' matching).
        return "default-src 'self'; script-src 'self'; style-src 'self'; img-src " + images
            + "; connect-src 'self'; object-src 'none'; base-uri 'self'; form-action 'self'; frame-ancestors 'none'";
    }

    /// <summary>
    /// The CSP source expression of a tile URL template's origin: <c>https://tiles.example.org</c>; a placeholder in
    /// the host's first label (<c>https://{s}.tiles.example.org/...</c>) becomes a <c>*.</c> wildcard; any other
    /// placeholder in the host leaves only the scheme. Null when there is no template or it is not http(s).
    /// </summary>
    public static string? TileSource(string? template)
    {
        if (string.IsNullOrWhiteSpace(template))
        {
            return null;
        }

        int schemeEnd = template.IndexOf("://", StringComparison.Ordinal);
        if (schemeEnd <= 0)
        {
            return null;
        }

        string scheme = template[..schemeEnd].ToLowerInvariant();
        if (scheme is not ("http" or "https"))
        {
            return null;
        }

        string rest = template[(schemeEnd + 3)..];
        int pathStart = rest.IndexOfAny(['/', '?', '#']);
        string authority = pathStart < 0 ? rest : rest[..pathStart];
        int firstDot = authority.IndexOf('.', StringComparison.Ordinal);
        if (authority.StartsWith('{') && firstDot > 0 && authority[firstDot - 1] == '}')
        {
            authority = "*" + authority[firstDot..];
        }

        bool plain = authority.Length > 0 && authority.All(c => char.IsAsciiLetterOrDigit(c) || c is '.' or '-' or ':' or '*' or '[' or ']');
        return plain && authority.LastIndexOf('*') <= 0 ? scheme + "://" + authority : scheme + ":";
    }
}
