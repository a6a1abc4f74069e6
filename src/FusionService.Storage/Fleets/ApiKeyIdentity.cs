// Who an API key belongs to and what it may do.
namespace FusionService.Storage.Fleets;

/// <summary>The result of resolving a valid, unrevoked API key.</summary>
/// <param name="KeyId">Identifier of the key row.</param>
/// <param name="FleetId">The fleet the key is bound to; the key sees only this fleet's data.</param>
/// <param name="Role">What the key may do.</param>
public readonly record struct ApiKeyIdentity(Guid KeyId, Guid FleetId, ApiKeyRole Role)
{
    /// <summary>When the key stops resolving; null when it does not expire.</summary>
    public DateTimeOffset? ExpiresAt { get; init; }
}
