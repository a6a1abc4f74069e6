// The body of GET /v1/alerts.
using System.Text.Json.Serialization;

namespace FusionService.Alerts;

/// <summary>The body of <c>GET /v1/alerts</c>: one page of alerts.</summary>
/// <param name="Alerts">Matching alerts in the requested order (newest start first, or severity first).</param>
/// <param name="NextCursor">Pass as <c>cursor</c> (with the same filters and sort) for the next page; null on the last page.</param>
/// <param name="Caution">The cautions that go with every location the alerts lead to.</param>
public sealed record AlertListResponse(
    IReadOnlyList<AlertResponse> Alerts,
    [property: JsonIgnore(Condition = JsonIgnoreCondition.Never)] string? NextCursor,
    string Caution);
