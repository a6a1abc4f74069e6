// The caution every response carrying a vehicle location bears.
namespace FusionService.Http;

/// <summary>
/// The caution on every response that returns a vehicle location: a body field where the body is ours to shape
/// (<see cref="Text"/>), and the response header <see cref="HeaderName"/> on every such response (also the track's CSV,
/// GPX and GeoJSON bodies and the WebSocket upgrade of the position stream), worded as in the README and the dashboard.
/// </summary>
public static class LocationCaution
{
    /// <summary>The response header that carries <see cref="Text"/>.</summary>
    public const string HeaderName = "Fusion-Caution";

    /// <summary>The caution (plain ASCII, so that it fits a header).</summary>
    public const string Text =
        "Positions, headings and speeds are estimates with the stated uncertainty: not for safety-critical navigation or "
        + "collision avoidance. Vehicle locations reveal where drivers are and are personal data: process them only on a "
        + "lawful basis and show them only to those who need them.";

    /// <summary>The sentence for an endpoint's OpenAPI description.</summary>
    public const string Documentation =
        " Every response that returns a location carries the header " + HeaderName + " with the cautions (estimates, not "
        + "for safety-critical navigation or collision avoidance; drivers' locations are personal data).";

    /// <summary>Adds the header to <paramref name="http"/>'s response (before its body starts).</summary>
    public static void AddHeader(HttpContext http)
    {
        ArgumentNullException.ThrowIfNull(http);
        http.Response.Headers[HeaderName] = Text;
    }
}
