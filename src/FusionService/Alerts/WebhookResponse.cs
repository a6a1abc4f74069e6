// One webhook subscription as the API shows it.
namespace FusionService.Alerts;

/// <summary>A webhook subscription (the secret is never returned).</summary>
/// <param name="Id">Subscription id.</param>
/// <param name="Url">Target URL.</param>
/// <param name="CreatedAt">Creation time (UTC).</param>
public sealed record WebhookResponse(Guid Id, string Url, DateTimeOffset CreatedAt);
