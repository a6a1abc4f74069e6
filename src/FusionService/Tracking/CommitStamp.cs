// Which commit stored a batch handed to a track.
namespace FusionService.Tracking;

/// <summary>
/// The PostgreSQL transaction id (<c>pg_current_xact_id()</c>, an <c>xid8</c>) of the commit that stored a batch: one
/// numbering for every process on the store, so a track restored in any process can tell whether its restore already
/// read the batch (<see cref="Storage.Measurements.CommitSnapshot.Holds"/>).
/// </summary>
/// <param name="TransactionId">The commit's transaction id; 0 when unknown (the batch is never skipped).</param>
[GenerateSerializer]
[Immutable]
[Alias("FusionService.Tracking.CommitStamp.v2")]
public readonly record struct CommitStamp([property: Id(0)] long TransactionId);
