// A pair the receiver fit of a new vehicle starts from.
namespace FusionService.Vehicles;

/// <summary>A starting pair of the receiver fit.</summary>
/// <param name="CorrelatedShare">Correlated share of the reported variance.</param>
/// <param name="TimeConstantS">Time constant of the correlated part, seconds.</param>
/// <param name="From"><c>fleet</c>: the medians above; <c>settings</c>: section <c>GnssErrorModel</c>.</param>
public sealed record ReceiverStartResponse(double CorrelatedShare, double TimeConstantS, string From);
