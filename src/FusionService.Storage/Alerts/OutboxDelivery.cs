// One claimed webhook delivery.
namespace FusionService.Storage.Alerts;

/// <summary>A <c>webhook_outbox</c> row claimed for sending, with its subscription's URL and encrypted secret.</summary>
/// <param name="DeliveryId">Id (sent as the <c>Fusion-Webhook-Id</c> header; the same on every attempt).</param>
/// <param name="WebhookId">The subscription (the circuit breaker's key).</param>
/// <param name="AlertId">The alert.</param>
/// <param name="Url">Target URL.</param>
/// <param name="ProtectedSecret">Signing secret of the subscription, encrypted with ASP.NET Core Data Protection.</param>
/// <param name="Payload">The exact JSON body to send.</param>
/// <param name="Attempts">Attempts made before this one.</param>
/// <param name="CreatedAt">When the row was written (in the alert's transaction).</param>
public sealed record OutboxDelivery(
    Guid DeliveryId, Guid WebhookId, Guid AlertId, string Url, string ProtectedSecret, string Payload, int Attempts, DateTimeOffset CreatedAt);
