// The body of POST /v1/webhooks.
namespace FusionService.Alerts;

/// <summary>The body of <c>POST /v1/webhooks</c>.</summary>
/// <param name="Url">Absolute http or https URL the alerts are POSTed to.</param>
/// <param name="Secret">Signing secret, 16-200 characters (keep it; it is never shown again).</param>
public sealed record WebhookRequest(string? Url, string? Secret);
