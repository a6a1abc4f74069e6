// One API key as listed to its fleet's administrators (never its secret).
namespace FusionService.Storage.Fleets;

/// <summary>An API key's stored facts: everything but the secret, which is not stored.</summary>
/// <param name="KeyId">Identifier of the key row.</param>
/// <param name="FleetId">The fleet the key is bound to.</param>
/// <param name="Role">What the key may do.</param>
/// <param name="Label">Free text given at creation.</param>
/// <param name="CreatedAt">When the key was created.</param>
/// <param name="ExpiresAt">When the key stops being accepted; null when it does not expire.</param>
/// <param name="RevokedAt">When the key was revoked; null while it is not.</param>
public sealed record ApiKeyInfo(
    Guid KeyId, Guid FleetId, ApiKeyRole Role, string Label, DateTimeOffset CreatedAt, DateTimeOffset? ExpiresAt, DateTimeOffset? RevokedAt)
{
    /// <summary>True when the key is neither revoked nor expired at <paramref name="now"/>.</summary>
    public bool IsActiveAt(DateTimeOffset now) => RevokedAt is null && (ExpiresAt is not { } expires || expires > now);
}
