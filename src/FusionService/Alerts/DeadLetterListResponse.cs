// The body of GET /v1/webhooks/{id}/dead-letters.
namespace FusionService.Alerts;

/// <summary>The body of <c>GET /v1/webhooks/{id}/dead-letters</c>.</summary>
/// <param name="DeadLetters">The subscription's dead letters, newest first.</param>
public sealed record DeadLetterListResponse(IReadOnlyList<DeadLetterResponse> DeadLetters);
