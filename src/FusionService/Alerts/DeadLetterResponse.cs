// One dead-lettered webhook delivery as the API shows it.
namespace FusionService.Alerts;

/// <summary>A delivery given up after the last allowed attempt (<c>Webhooks:MaxAttempts</c>).</summary>
/// <param name="DeliveryId">Delivery id (the <c>Fusion-Webhook-Id</c> header it was sent with, kept on re-queue).</param>
/// <param name="AlertId">The alert it carries.</param>
/// <param name="Attempts">Attempts made.</param>
/// <param name="LastError">Why the last attempt failed.</param>
/// <param name="CreatedAt">When the delivery was written (UTC).</param>
/// <param name="DeadLetteredAt">When it was given up (UTC).</param>
public sealed record DeadLetterResponse(Guid DeliveryId, Guid AlertId, int Attempts, string? LastError, DateTimeOffset CreatedAt, DateTimeOffset DeadLetteredAt);
