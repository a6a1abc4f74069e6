// One committed batch of a vehicle, as handed to its track.
namespace FusionService.Tracking;

/// <summary>
/// The measurements of one vehicle that one commit stored, with that commit's <see cref="CommitStamp"/>: the unit a
/// track is handed (<see cref="IVehicleTrackGrain.ProcessManyAsync"/> takes several in one call).
/// </summary>
/// <param name="Batch">The measurements, already committed.</param>
/// <param name="Stamp">The commit that stored them.</param>
[GenerateSerializer]
[Immutable]
[Alias("FusionService.Tracking.TrackDelivery")]
public readonly record struct TrackDelivery([property: Id(0)] TrackMeasurement[] Batch, [property: Id(1)] CommitStamp Stamp);
