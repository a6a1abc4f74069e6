// The body of GET /v1/webhooks.
namespace FusionService.Alerts;

/// <summary>The body of <c>GET /v1/webhooks</c>.</summary>
/// <param name="Webhooks">The fleet's subscriptions, oldest first.</param>
public sealed record WebhookListResponse(IReadOnlyList<WebhookResponse> Webhooks);
