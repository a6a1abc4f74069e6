// What the dashboard page reads at start: its tile source, polling interval and the service's silence limit.
namespace FusionService.Dashboard;

/// <summary>Settings the dashboard page reads at start (no key needed; holds no fleet data).</summary>
/// <param name="TileUrlTemplate">Map tile address with {z}/{x}/{y}, or null for no tiles.</param>
/// <param name="TileAttribution">Attribution text for the tiles, or null.</param>
/// <param name="PollIntervalMs">Polling interval for the fleet and the alerts, milliseconds.</param>
/// <param name="SilentAfterS">The service's silence limit, seconds (setting <c>Alerts:SilentAfterS</c>): the page calls a
/// van silent by the same limit as the status of <c>GET /v1/vehicles</c>.</param>
public sealed record DashboardSettingsResponse(string? TileUrlTemplate, string? TileAttribution, int PollIntervalMs, double SilentAfterS);
