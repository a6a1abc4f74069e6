// One documented fault of the demo fleet.
namespace FusionService.Simulator.Fleet;

/// <summary>A deliberate fault of the demo fleet, as listed by <see cref="DemoFleet.Faults"/>.</summary>
/// <param name="Kind">What kind of fault.</param>
/// <param name="VehicleId">The van it affects, or null for a town-wide fault (every van passing the place).</param>
/// <param name="Description">Plain-language description with the invented values used.</param>
public sealed record DemoFault(DemoFaultKind Kind, string? VehicleId, string Description);
