// Options of the dashboard the service serves at "/".
namespace FusionService.Dashboard;

/// <summary>Options of the browser dashboard (section "Dashboard").</summary>
public sealed class DashboardOptions
{
    /// <summary>Configuration section.</summary>
    public const string Section = "Dashboard";

    /// <summary>Whether the service serves the dashboard's static files at "/". Default true.</summary>
    public bool Enabled { get; set; } = true;

    /// <summary>
    /// Folder of the dashboard's static files. Default: the "dashboard" folder beside the service's assembly, where the build
    /// copies them.
    /// </summary>
    public string? StaticFolder { get; set; }

    /// <summary>
    /// Optional map tile address with <c>{z}</c>, <c>{x}</c> and <c>{y}</c> placeholders (Web Mercator tiles, e.g. a tile
    /// server of your own). Null (the default): the map is drawn without tiles, in the local metric frame only.
    /// </summary>
    public string? TileUrlTemplate { get; set; }

    /// <summary>Attribution text shown under the map when tiles are drawn, as the tile source requires.</summary>
    public string? TileAttribution { get; set; }

    /// <summary>How often the dashboard polls the fleet and the alerts, milliseconds, 500 to 60000. Default 1500.</summary>
    [System.ComponentModel.DataAnnotations.Range(500, 60000)]
    public int PollIntervalMs { get; set; } = 1500;
}
