// Filters and paging of the fleet list.
namespace FusionService.Storage.Vehicles;

/// <summary>Filters and paging for <see cref="FleetVehicleRepository.ListAsync"/>.</summary>
/// <param name="FleetId">The fleet.</param>
/// <param name="NowUtc">The server's clock: ages and silence are measured from it.</param>
/// <param name="SilentAfterS">A vehicle counts as silent when nothing was received from it for longer, seconds.</param>
/// <param name="MovingMinSpeedMps">A vehicle counts as moving from this estimated speed on, m/s.</param>
/// <param name="Statuses">Only vehicles in these states (<see cref="FleetVehicleRow.Status"/>); null for all.</param>
/// <param name="WithOpenAlerts">true: only vehicles with an open alert; false: only without; null: all.</param>
/// <param name="After">Only vehicle ids after this one in byte order (paging); null to start at the first.</param>
/// <param name="Limit">Most rows returned (1-1001: a page of up to 1000 and one to tell whether more follow).</param>
public sealed record FleetVehicleQuery(
    Guid FleetId,
    DateTimeOffset NowUtc,
    double SilentAfterS,
    double MovingMinSpeedMps,
    IReadOnlyList<string>? Statuses,
    bool? WithOpenAlerts,
    string? After,
    int Limit);
