// One vehicle's live track as an Orleans grain.
namespace FusionService.Tracking;

/// <summary>
/// The live track of one vehicle, keyed <c>"{fleetId}/{vehicleId}"</c> (<see cref="GrainKeys"/>). It holds no Orleans
/// state: on activation it rebuilds itself from the newest stored checkpoint and the stored measurements after it,
/// so any silo can host it.
/// </summary>
[Alias("FusionService.Tracking.IVehicleTrackGrain")]
public interface IVehicleTrackGrain : IGrainWithStringKey
{
    /// <summary>
    /// Processes measurements that are already committed in the store (in any order). <paramref name="stamp"/> names the
    /// commit that stored them; a track whose restore already held that commit skips the batch.
    /// </summary>
    [Alias("Process")]
    Task ProcessAsync(TrackMeasurement[] batch, CommitStamp stamp);

    /// <summary>
    /// Processes several committed batches in one call, in the order given as far as their commits are concerned (each
    /// is skipped or makes the track rebuild exactly as <see cref="ProcessAsync"/> would), their measurements together
    /// in canonical order: a dispatcher that finds a vehicle's earlier hand-over still running sends what queued behind
    /// it at once, so a gateway's many small batches cost one call and no re-processing between them.
    /// </summary>
    [Alias("ProcessMany")]
    Task ProcessManyAsync(TrackDelivery[] deliveries);

    /// <summary>The current state, or null before the vehicle has a position.</summary>
    [Alias("GetState")]
    Task<VehicleStateSnapshot?> GetStateAsync();

    /// <summary>
    /// Forgets the track and rebuilds it from the store at its next call: for when measurements committed at or after
    /// <paramref name="fromUs"/> may not have reached it (a delivery that failed or timed out). Checkpoints at or after
    /// that time are deleted, since they may lack those measurements; nothing is checkpointed at this deactivation.
    /// </summary>
    [Alias("Rebuild")]
    Task RebuildAsync(long fromUs);

    /// <summary>Stores the track's base checkpoint now.</summary>
    [Alias("Checkpoint")]
    Task PersistCheckpointAsync();
}
