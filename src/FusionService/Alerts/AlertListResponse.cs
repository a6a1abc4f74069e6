// The body of GET /v1/alerts.
namespace FusionService.Alerts;

/// <summary>The body of <c>GET /v1/alerts</c>.</summary>
/// <param name="Alerts">Matching alerts, newest start first.</param>
public sealed record AlertListResponse(IReadOnlyList<AlertResponse> Alerts);
