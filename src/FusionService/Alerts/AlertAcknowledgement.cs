// Who acknowledged an alert, and when.
namespace FusionService.Alerts;

/// <summary>The acknowledgement of an alert.</summary>
/// <param name="At">When it was acknowledged (server clock, UTC).</param>
/// <param name="KeyId">Id of the API key that acknowledged it.</param>
/// <param name="KeyLabel">That key's label at the time (empty when the key has none).</param>
public sealed record AlertAcknowledgement(DateTimeOffset At, Guid? KeyId, string KeyLabel);
