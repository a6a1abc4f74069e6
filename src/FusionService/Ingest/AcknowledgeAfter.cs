// When the ingest answers: after the durable commit, or after the tracks have also processed the batch.
namespace FusionService.Ingest;

/// <summary>The point at which an ingest request is acknowledged. Both satisfy the durability contract: a 2xx
/// always means every accepted message is committed in PostgreSQL.</summary>
public enum AcknowledgeAfter
{
    /// <summary>Answer as soon as the batch is committed; the tracks process it in the background
    /// (<see cref="Tracking.TrackDispatcher"/>). The default: filtering stays off the acknowledgement path.</summary>
    Commit,

    /// <summary>Answer after the tracks have processed the batch too, so a state read right after the answer already
    /// includes it (read-your-writes; slower under load).</summary>
    Tracking,
}
