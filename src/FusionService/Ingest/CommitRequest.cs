// One request's rows waiting for the group commit.
using System.Diagnostics;
using FusionService.Operations;
using FusionService.Storage.Measurements;

namespace FusionService.Ingest;

/// <summary>
/// A request's rows, the completion its caller awaits (the keys it inserted) and, while someone listens, the span of the
/// request's wait for its commit (<see cref="FusionTelemetry.IngestCommitSpan"/>, in the request's trace).
/// </summary>
internal sealed class CommitRequest
{
    public CommitRequest(IReadOnlyList<MeasurementRow> rows)
    {
        Rows = rows;
        if (rows.Count > 0 && FusionTelemetry.Source.HasListeners())
        {
            // Started in the request's trace but not made current: the commit ends on the writer's loop.
            var current = Activity.Current;
            Span = FusionTelemetry.StartIngestCommit(rows.Count);
            Activity.Current = current;
        }
    }

    public IReadOnlyList<MeasurementRow> Rows { get; }

    public TaskCompletionSource<(HashSet<MeasurementKey> Inserted, long TransactionId)> Completion { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);

    /// <summary>The span of the request's wait for its commit, or null when nobody listens.</summary>
    public Activity? Span { get; }

    /// <summary>Ends <see cref="Span"/>: the group commit held <paramref name="batchRows"/> rows of <paramref name="batchRequests"/> requests, or failed with <paramref name="error"/>.</summary>
    public void EndSpan(int batchRows, int batchRequests, string? error = null)
    {
        if (Span is not { } span)
        {
            return;
        }

        span.SetTag("fusion.commit.rows", batchRows).SetTag("fusion.commit.requests", batchRequests);
        if (error is not null)
        {
            span.SetStatus(ActivityStatusCode.Error, error);
        }

        var current = Activity.Current;
        span.Stop();
        Activity.Current = current;
    }
}
