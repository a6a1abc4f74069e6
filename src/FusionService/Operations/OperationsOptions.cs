// Settings of the operations endpoints.
namespace FusionService.Operations;

/// <summary>Settings of section <c>Operations</c>.</summary>
public sealed class OperationsOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Operations";

    /// <summary>
    /// Bearer token a metrics scraper may send to <c>GET /metrics</c> instead of an admin API key; empty (the default):
    /// only admin keys are accepted. The metrics are service-wide counts with no fleet, vehicle or position in them.
    /// Health endpoints and the API documentation (<c>/swagger</c>, <c>/openapi/v1.json</c>) hold no data and stay open.
    /// </summary>
    public string MetricsToken { get; set; } = string.Empty;

    /// <summary>
    /// True leaves <c>GET /metrics</c> open to anyone without a token or key (for a service whose port only an internal
    /// network reaches). Default false.
    /// </summary>
    public bool MetricsAnonymous { get; set; }
}
