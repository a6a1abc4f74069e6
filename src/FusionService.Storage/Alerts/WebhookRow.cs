// One webhook subscription.
namespace FusionService.Storage.Alerts;

/// <summary>A row of <c>webhooks</c> (the secret is never read back by the API).</summary>
/// <param name="WebhookId">Id.</param>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="Url">Absolute http or https URL the alerts are POSTed to.</param>
/// <param name="CreatedAt">Creation time (server clock, UTC).</param>
public sealed record WebhookRow(Guid WebhookId, Guid FleetId, string Url, DateTimeOffset CreatedAt);
