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
    /// <summary>A request is mixed when its runs of one vehicle's rows hold fewer rows than this on average.</summary>
    internal const int MixedBelowRowsPerVehicle = MeasurementChunkFolder.MeanCountBelow;

    public CommitRequest(IReadOnlyList<MeasurementRow> rows)
    {
        Rows = rows;
        Mixed = IsMixed(rows);
        if (rows.Count > 0 && FusionTelemetry.Source.HasListeners())
        {
            // Started in the request's trace but not made current: the commit ends on the writer's loop.
            var current = Activity.Current;
            Span = FusionTelemetry.StartIngestCommit(rows.Count);
            Activity.Current = current;
        }
    }

    public IReadOnlyList<MeasurementRow> Rows { get; }

    /// <summary>
    /// Whether the rows spread thinly over several vehicles (a gateway's batch): at least two runs of one vehicle's
    /// consecutive rows, fewer than <see cref="MixedBelowRowsPerVehicle"/> rows per run on average. A vehicle whose rows
    /// are not consecutive counts once per run, which only makes a request look more mixed than it is.
    /// </summary>
    public bool Mixed { get; }

    public TaskCompletionSource<(HashSet<MeasurementKey> Inserted, long TransactionId)> Completion { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);

    /// <summary>The span of the request's wait for its commit, or null when nobody listens.</summary>
    public Activity? Span { get; }

    private static bool IsMixed(IReadOnlyList<MeasurementRow> rows)
    {
        int runs = rows.Count > 0 ? 1 : 0;
        for (int i = 1; i < rows.Count; i++)
        {
            if (rows[i].FleetId != rows[i - 1].FleetId || !string.Equals(rows[i].VehicleId, rows[i - 1].VehicleId, StringComparison.Ordinal))
            {
                runs++;
            }
        }

        return runs >= 2 && rows.Count < MixedBelowRowsPerVehicle * runs;
    }

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
