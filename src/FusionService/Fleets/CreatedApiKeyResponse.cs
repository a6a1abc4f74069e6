// A key created or rotated through the API, with its only copy of the secret.
namespace FusionService.Fleets;

/// <summary>A new API key and its secret, shown only in this answer.</summary>
/// <param name="Key">The new key.</param>
/// <param name="Secret">The secret to send as 'Authorization: Bearer &lt;secret&gt;'; the service keeps only its hash.</param>
/// <param name="Replaced">For a rotation, the old key as it is now (revoked, or expiring at the end of the grace period).</param>
public sealed record CreatedApiKeyResponse(ApiKeyResponse Key, string Secret, ApiKeyResponse? Replaced = null);
