// One delivery address on a round.
namespace FusionService.Scenarios;

/// <summary>A delivery stop of a <see cref="DeliveryRound"/>: an invented address on a street of a <see cref="DeliveryNetwork"/>.</summary>
/// <param name="Address">Invented street address, e.g. "214 Quillfern Street".</param>
/// <param name="EastM">East from the network origin (the depot), metres.</param>
/// <param name="NorthM">North from the network origin, metres.</param>
/// <param name="DwellS">Time parked at the stop, seconds.</param>
public readonly record struct DeliveryStop(string Address, double EastM, double NorthM, double DwellS);
