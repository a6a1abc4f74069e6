// A freshly created API key with its only plaintext copy.
namespace FusionService.Storage.Fleets;

/// <summary>A newly created API key. <see cref="Secret"/> exists only here: the store keeps its SHA-256 hash,
/// so it cannot be shown again. <see cref="ToString"/> leaves the secret out, so logging the value is safe.</summary>
/// <param name="KeyId">Identifier of the key row (use it to revoke the key).</param>
/// <param name="FleetId">The fleet the key is bound to.</param>
/// <param name="Role">What the key may do.</param>
/// <param name="Secret">The plaintext secret: <c>fsk_</c> followed by 32 random bytes in base64url without
/// padding (47 characters in all).</param>
public readonly record struct CreatedApiKey(Guid KeyId, Guid FleetId, ApiKeyRole Role, string Secret)
{
    /// <summary>Describes the key without its secret.</summary>
    public override string ToString() => $"CreatedApiKey {{ KeyId = {KeyId}, FleetId = {FleetId}, Role = {Role}, Secret = (hidden) }}";
}
