// Median and spread of one fitted quantity over a fleet's receivers.
namespace FusionService.Vehicles;

/// <summary>Median and 10th-90th percentile (linear interpolation) of one quantity over the counted fits.</summary>
/// <param name="Median">The median.</param>
/// <param name="P10">The 10th percentile.</param>
/// <param name="P90">The 90th percentile.</param>
public sealed record ReceiverSpreadResponse(double Median, double P10, double P90);
