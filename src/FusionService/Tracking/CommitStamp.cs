// Which commit stored a batch handed to a track.
namespace FusionService.Tracking;

/// <summary>The <see cref="Ingest.CommitClock"/> of the process that committed a batch, and the commit's number on it.</summary>
/// <param name="InstanceId">The committing process's <see cref="Ingest.CommitClock.InstanceId"/>.</param>
/// <param name="Sequence">The commit's number; 0 when unknown (never skipped).</param>
[GenerateSerializer]
[Immutable]
[Alias("FusionService.Tracking.CommitStamp")]
public readonly record struct CommitStamp([property: Id(0)] Guid InstanceId, [property: Id(1)] long Sequence);
