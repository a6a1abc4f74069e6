// Settings of the operations endpoints.
namespace FusionService.Operations;

/// <summary>Settings of section <c>Operations</c>.</summary>
public sealed class OperationsOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Operations";

    /// <summary>
    /// Bearer token a metrics scraper must send to <c>GET /metrics</c>; empty (the default) leaves the endpoint open.
    /// The metrics are service-wide counts with no fleet, vehicle or position in them, so fleet API keys do not apply;
    /// in production set a token or serve the endpoint only on an internal network. Health endpoints and the API
    /// documentation (<c>/swagger</c>, <c>/openapi/v1.json</c>) hold no data and stay open.
    /// </summary>
    public string MetricsToken { get; set; } = string.Empty;
}
