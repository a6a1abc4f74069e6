using FusionService.Estimation.Tracking;

namespace FusionService.Storage.Vehicles;

/// <summary>
/// The GNSS error pair a vehicle's receiver fit starts from (migration 0014): the median of what its fleet's other
/// receivers fitted, or none (the configured pair).
/// </summary>
/// <param name="Decided">Whether the vehicle's start is decided (it is before its first measurement is filtered).</param>
/// <param name="Share">Correlated share to start from; null: the configured one.</param>
/// <param name="TimeConstantS">Time constant to start from, seconds; null: the configured one.</param>
public readonly record struct ReceiverStart(bool Decided, double? Share, double? TimeConstantS)
{
    /// <summary>The fresh track state of the vehicle: its receiver fit starting from the fleet's pair, or from the configured one.</summary>
    public TrackState TrackStart => Share is double share && TimeConstantS is double tauS ? TrackState.StartingFrom(share, tauS) : TrackState.Empty;
}
