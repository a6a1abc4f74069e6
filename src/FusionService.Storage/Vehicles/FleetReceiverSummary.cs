namespace FusionService.Storage.Vehicles;

/// <summary>What a fleet's receivers have fitted (<c>vehicle_receiver_fits</c>, migration 0014).</summary>
/// <param name="Fitted">Vehicles with a stored fit.</param>
/// <param name="Counted">Of those, the vehicles whose fits rest on enough evidence of their own to count for a new vehicle's start.</param>
/// <param name="MedianShare">Median correlated share of the counted fits; null when none counts.</param>
/// <param name="MedianTimeConstantS">Median time constant of the counted fits, seconds; null when none counts.</param>
/// <param name="ShareP10">10th percentile of the counted shares (linear interpolation); null when none counts.</param>
/// <param name="ShareP90">90th percentile of the counted shares; null when none counts.</param>
/// <param name="TimeConstantP10S">10th percentile of the counted time constants, seconds; null when none counts.</param>
/// <param name="TimeConstantP90S">90th percentile of the counted time constants, seconds; null when none counts.</param>
/// <param name="StartedFromFleet">Vehicles whose tracks started from their fleet's fits.</param>
public sealed record FleetReceiverSummary(
    long Fitted,
    long Counted,
    double? MedianShare,
    double? MedianTimeConstantS,
    double? ShareP10,
    double? ShareP90,
    double? TimeConstantP10S,
    double? TimeConstantP90S,
    long StartedFromFleet);
