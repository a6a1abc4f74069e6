// The spans of verdict writes, from a grain's queuing until the tracks' writer has stored the rows.
using System.Diagnostics;
using FusionService.Operations;

namespace FusionService.Tracking;

/// <summary>
/// Keeps one <see cref="FusionTelemetry.VerdictWriteSpan"/> span for each <see cref="TrackWriteQueue.Enqueue"/> made
/// while someone listens: started in the caller's trace (the grain's span, so the write belongs to the ingest request's
/// trace) and ended when <see cref="TrackWriteQueue.WrittenThrough"/> passes its ticket. The span's duration is the
/// queuing plus the bulk write the rows were part of.
/// </summary>
internal sealed class VerdictWriteSpans
{
    private readonly Lock _gate = new();
    private readonly List<(long Ticket, Activity Span)> _open = [];

    /// <summary>Starts the span of <paramref name="ticket"/> without making it the current activity.</summary>
    public void Queued(long ticket, int outcomes, int states)
    {
        if (!FusionTelemetry.Source.HasListeners())
        {
            return;
        }

        var current = Activity.Current;
        var span = FusionTelemetry.Source.StartActivity(FusionTelemetry.VerdictWriteSpan);
        Activity.Current = current;
        if (span is null)
        {
            return;
        }

        span.SetTag("fusion.ticket", ticket).SetTag("fusion.outcomes", outcomes).SetTag("fusion.states", states);
        lock (_gate)
        {
            _open.Add((ticket, span));
        }
    }

    /// <summary>Ends the spans of every ticket up to <paramref name="writtenThrough"/>.</summary>
    public void Written(long writtenThrough)
    {
        List<Activity>? done = null;
        lock (_gate)
        {
            for (int i = _open.Count - 1; i >= 0; i--)
            {
                if (_open[i].Ticket <= writtenThrough)
                {
                    (done ??= []).Add(_open[i].Span);
                    _open.RemoveAt(i);
                }
            }
        }

        if (done is null)
        {
            return;
        }

        // Stop sets the current activity back to what was current where the span started: keep the writer's own.
        var current = Activity.Current;
        foreach (var span in done)
        {
            span.Stop();
        }

        Activity.Current = current;
    }
}
