// The GNSS error model a vehicle's track filters with.
namespace FusionService.Vehicles;

/// <summary>
/// The model of the GNSS fixes' error the track uses now: a share of the reported accuracy's variance correlated over a
/// time constant (first-order Gauss-Markov), the rest white. The values of section <c>GnssErrorModel</c>, or this
/// vehicle's own once its track has fitted them from the fixes of its stops (<c>GnssErrorModel:FitPerVehicle</c>).
/// </summary>
/// <param name="CorrelatedShare">Correlated share of the variance, in (0, 1).</param>
/// <param name="TimeConstantS">Time constant of the correlated part, seconds.</param>
/// <param name="Fitted">Whether the two values are this vehicle's fit rather than the configured ones.</param>
/// <param name="StartedFrom">
/// Where the fit started: <c>fleet</c>, the median of what the fleet's other receivers had fitted when the vehicle was
/// new (<c>GnssErrorModel:FleetStartMinVehicles</c>), or <c>settings</c>, the configured values.
/// </param>
public sealed record GnssErrorModelResponse(double CorrelatedShare, double TimeConstantS, bool Fitted, string StartedFrom);
