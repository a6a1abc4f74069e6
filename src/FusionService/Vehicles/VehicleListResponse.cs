// The caller's fleet's vehicles, one page.
using System.Text.Json.Serialization;

namespace FusionService.Vehicles;

/// <summary>One page of the caller's fleet's vehicles that have an estimate, ordered by id.</summary>
/// <param name="Vehicles">The vehicles of this page.</param>
/// <param name="AsOf">The server's clock when the list was read; ages are measured from it.</param>
/// <param name="SilentAfterS">The silence limit the statuses were judged by, seconds: the request's <c>silent_after_s</c>,
/// else the service's (setting <c>Alerts:SilentAfterS</c>, default 120), which the dashboard uses too.</param>
/// <param name="NextAfter">Pass as <c>after</c> for the next page; null on the last page.</param>
/// <param name="Caution">The cautions that go with every location.</param>
public sealed record VehicleListResponse(
    IReadOnlyList<VehicleSummary> Vehicles,
    DateTimeOffset AsOf,
    double SilentAfterS,
    [property: JsonIgnore(Condition = JsonIgnoreCondition.Never)] string? NextAfter,
    string Caution);
