// The body of POST /v1/webhooks/{id}/dead-letters/requeue.
namespace FusionService.Alerts;

/// <summary>The body of <c>POST /v1/webhooks/{id}/dead-letters/requeue</c>.</summary>
/// <param name="Requeued">Dead letters made due again with a fresh attempt count.</param>
public sealed record RequeueResponse(int Requeued);
