// What a group commit stored for one request.
using FusionService.Storage.Measurements;

namespace FusionService.Ingest;

/// <summary>
/// The keys among a request's rows that the group commit inserted, and for each vehicle the PostgreSQL transaction id of
/// the commit that stored its rows: a request's vehicles are split over the commit writers by their bucket
/// (<see cref="IngestBuckets"/>), so one request can be stored by up to <see cref="IngestOptions.CommitWriters"/>
/// transactions, but one vehicle's rows of it always by one.
/// </summary>
public sealed class CommitOutcome
{
    private readonly long[] _transactionIdByWriter;

    internal CommitOutcome(HashSet<MeasurementKey> inserted, long[] transactionIdByWriter)
    {
        Inserted = inserted;
        _transactionIdByWriter = transactionIdByWriter;
    }

    /// <summary>Keys of the rows this request inserted (each once); a key stored before, or by a concurrent request, is not among them.</summary>
    public HashSet<MeasurementKey> Inserted { get; }

    /// <summary>The transaction id of the commit that stored the vehicle's rows of this request (0 when it had none).</summary>
    public long TransactionIdOf(Guid fleetId, string vehicleId) =>
        _transactionIdByWriter[GroupCommitWriter.WriterOf(fleetId, vehicleId, _transactionIdByWriter.Length)];
}
