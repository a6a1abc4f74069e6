// One API key as the API shows it.
using FusionService.Security;
using FusionService.Storage.Fleets;

namespace FusionService.Fleets;

/// <summary>An API key without its secret (which the service does not keep).</summary>
/// <param name="Id">The key's id.</param>
/// <param name="Role">ingest, read or admin.</param>
/// <param name="Label">Free text given at creation.</param>
/// <param name="State">active, expired or revoked.</param>
/// <param name="CreatedAt">When the key was created.</param>
/// <param name="ExpiresAt">When the key stops being accepted; absent when it does not expire.</param>
/// <param name="RevokedAt">When the key was revoked; absent while it is not.</param>
public sealed record ApiKeyResponse(Guid Id, string Role, string Label, string State, DateTimeOffset CreatedAt, DateTimeOffset? ExpiresAt, DateTimeOffset? RevokedAt)
{
    /// <summary>The response of a stored key as of <paramref name="now"/>.</summary>
    public static ApiKeyResponse From(ApiKeyInfo key, DateTimeOffset now)
    {
        ArgumentNullException.ThrowIfNull(key);
        string state = key.RevokedAt is not null ? "revoked" : key.IsActiveAt(now) ? "active" : "expired";
        return new ApiKeyResponse(key.KeyId, ApiKeyFilter.RoleName(key.Role), key.Label, state, key.CreatedAt, key.ExpiresAt, key.RevokedAt);
    }
}
