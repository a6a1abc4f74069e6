// What a fleet's GNSS receivers have fitted, and what a new vehicle of the fleet starts from.
namespace FusionService.Vehicles;

/// <summary>
/// The GNSS error models the fleet's tracks have fitted from the fixes of their stops (docs/estimation.md, "Each
/// receiver's own share and time constant"), and the pair a vehicle the fleet has not had before starts from now.
/// </summary>
/// <param name="VehiclesFitted">Vehicles whose tracks have stored a fit.</param>
/// <param name="VehiclesCounted">Of those, the ones whose fits rest on at least min_long_lag_terms long-lag terms of their own (about ten minutes of standing): these count for a new vehicle's start.</param>
/// <param name="MinLongLagTerms">Evidence of its own a fit needs to count (the weight of the fit's prior).</param>
/// <param name="MinVehicles">Counted vehicles a new vehicle's start from the fleet needs (<c>GnssErrorModel:FleetStartMinVehicles</c>; 0: never).</param>
/// <param name="CorrelatedShare">Median, 10th and 90th percentile of the counted fits' correlated shares; null when none counts.</param>
/// <param name="TimeConstantS">Median, 10th and 90th percentile of the counted fits' time constants, seconds; null when none counts.</param>
/// <param name="NewVehiclesStart">The pair a vehicle the fleet has not had before starts from now.</param>
/// <param name="VehiclesStartedFromFleet">Vehicles whose tracks started from the fleet's fits.</param>
public sealed record FleetReceiversResponse(
    long VehiclesFitted,
    long VehiclesCounted,
    double MinLongLagTerms,
    int MinVehicles,
    ReceiverSpreadResponse? CorrelatedShare,
    ReceiverSpreadResponse? TimeConstantS,
    ReceiverStartResponse NewVehiclesStart,
    long VehiclesStartedFromFleet);
