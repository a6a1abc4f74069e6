// One dead-lettered webhook delivery.
namespace FusionService.Storage.Alerts;

/// <summary>A <c>webhook_outbox</c> row whose last allowed attempt failed.</summary>
/// <param name="DeliveryId">Delivery id (the <c>Fusion-Webhook-Id</c> header it was sent with).</param>
/// <param name="AlertId">The alert it carries.</param>
/// <param name="Attempts">Attempts made.</param>
/// <param name="LastError">Why the last attempt failed.</param>
/// <param name="CreatedAt">When the delivery was written.</param>
/// <param name="DeadLetteredAt">When it was given up.</param>
public sealed record DeadLetterRow(Guid DeliveryId, Guid AlertId, int Attempts, string? LastError, DateTimeOffset CreatedAt, DateTimeOffset DeadLetteredAt);
