// One request's rows waiting for the group commit.
using FusionService.Storage.Measurements;

namespace FusionService.Ingest;

/// <summary>A request's rows and the completion its caller awaits (the keys it inserted).</summary>
internal sealed class CommitRequest(IReadOnlyList<MeasurementRow> rows)
{
    public IReadOnlyList<MeasurementRow> Rows { get; } = rows;

    public TaskCompletionSource<(HashSet<MeasurementKey> Inserted, long TransactionId)> Completion { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);
}
