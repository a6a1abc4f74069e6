// The service's ActivitySource and the spans it starts.
using System.Diagnostics;

namespace FusionService.Operations;

/// <summary>
/// Name and version of the service's meter and <see cref="ActivitySource"/>, and the spans of one ingest request
/// (commit, hand-over to the vehicle's grain, the grain's processing, the verdict write), of smoothing replays and of
/// webhook deliveries. Every starter returns null when nobody listens (no tracer provider, no test listener), so an
/// untraced process pays one check per call. Span attributes carry vehicle ids (useful to follow one van), never
/// positions.
/// </summary>
public static class FusionTelemetry
{
    /// <summary>Name of the meter and the activity source: the service's name.</summary>
    public const string Name = "FusionService";

    /// <summary>Version given to the meter and the activity source.</summary>
    public const string Version = "1.0";

    /// <summary>Span of an ingest request waiting for its group commit.</summary>
    public const string IngestCommitSpan = "fusion.ingest.commit";

    /// <summary>Span of one group commit (its own trace, linked to the requests it stored).</summary>
    public const string GroupCommitSpan = "fusion.ingest.group_commit";

    /// <summary>Span of handing one vehicle's committed measurements to its track grain.</summary>
    public const string HandoverSpan = "fusion.track.handover";

    /// <summary>Span of a track grain processing a batch.</summary>
    public const string TrackProcessSpan = "fusion.track.process";

    /// <summary>Span from queuing a grain's verdicts and fused states until the tracks' writer has stored them.</summary>
    public const string VerdictWriteSpan = "fusion.track.verdict_write";

    /// <summary>Span of one smoothing replay (smoothed track or distance).</summary>
    public const string SmoothingSpan = "fusion.smoothing.replay";

    /// <summary>Span of one stretch of a smoothing replay.</summary>
    public const string StretchSpan = "fusion.smoothing.stretch";

    /// <summary>Span of one webhook delivery attempt.</summary>
    public const string WebhookSpan = "fusion.webhook.delivery";

    /// <summary>The service's activity source.</summary>
    public static ActivitySource Source { get; } = new(Name, Version);

    /// <summary>Starts the span of an ingest request's wait for its group commit of <paramref name="rows"/> rows.</summary>
    public static Activity? StartIngestCommit(int rows) =>
        Source.StartActivity(IngestCommitSpan)?.SetTag("fusion.rows", rows);

    /// <summary>Starts the span of a group commit of <paramref name="rows"/> rows linked to the requests' commit spans.</summary>
    public static Activity? StartGroupCommit(int rows, IEnumerable<ActivityContext> requests)
    {
        if (!Source.HasListeners())
        {
            return null;
        }

        var links = requests.Where(c => c != default).Select(c => new ActivityLink(c)).ToList();
        return Source.StartActivity(GroupCommitSpan, ActivityKind.Internal, parentContext: default, links: links)?
            .SetTag("fusion.rows", rows)
            .SetTag("fusion.requests", links.Count);
    }

    /// <summary>Starts the span of handing <paramref name="measurements"/> measurements to a vehicle's track grain.</summary>
    public static Activity? StartHandover(string vehicleId, int measurements) =>
        Source.StartActivity(HandoverSpan, ActivityKind.Internal)?.SetTag("fusion.vehicle", vehicleId).SetTag("fusion.measurements", measurements);

    /// <summary>Starts the span of a track grain (key <paramref name="grainKey"/>) processing <paramref name="measurements"/> measurements.</summary>
    public static Activity? StartTrackProcess(string grainKey, int measurements) =>
        Source.StartActivity(TrackProcessSpan)?.SetTag("fusion.track", grainKey).SetTag("fusion.measurements", measurements);

    /// <summary>Starts the span of one smoothing replay of a vehicle's window.</summary>
    public static Activity? StartSmoothing(string vehicleId, long fromUs, long toUs) =>
        Source.StartActivity(SmoothingSpan)?.SetTag("fusion.vehicle", vehicleId).SetTag("fusion.from_us", fromUs).SetTag("fusion.to_us", toUs);

    /// <summary>Starts the span of one stretch of a smoothing replay, read from <paramref name="readFromUs"/>.</summary>
    public static Activity? StartStretch(long readFromUs) =>
        Source.StartActivity(StretchSpan)?.SetTag("fusion.read_from_us", readFromUs);

    /// <summary>Starts the span of one webhook delivery attempt.</summary>
    public static Activity? StartWebhookDelivery(Guid deliveryId, Guid webhookId, int attempt) =>
        Source.StartActivity(WebhookSpan)?.SetTag("fusion.delivery", deliveryId.ToString("D")).SetTag("fusion.webhook", webhookId.ToString("D")).SetTag("fusion.attempt", attempt);
}
