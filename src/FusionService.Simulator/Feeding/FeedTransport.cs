// How the feeder talks to the service.
namespace FusionService.Simulator.Feeding;

/// <summary>Transport of <see cref="FleetFeeder"/>.</summary>
public enum FeedTransport
{
    /// <summary>One HTTP POST of an NDJSON body to <c>{base}/v1/telemetry</c> per batch.</summary>
    Http = 0,

    /// <summary>One WebSocket per van to <c>{base}/v1/telemetry/stream</c>; one frame <c>{"seq": n, "messages": [...]}</c> per batch, each acknowledged.</summary>
    WebSocket = 1,

    /// <summary>Both at once: vans in even positions of the feed (the first, third, ...) over HTTP, the others over WebSocket.</summary>
    Mixed = 2,
}
