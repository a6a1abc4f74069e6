// The authenticated caller of a request.
using FusionService.Storage.Fleets;

namespace FusionService.Security;

/// <summary>The fleet and role of the API key a request carried.</summary>
/// <param name="FleetId">The key's fleet: the only fleet the request can see.</param>
/// <param name="Role">The key's role.</param>
/// <param name="KeyHash">Hex SHA-256 of the secret.</param>
/// <param name="KeyId">The key's id (the rate-limit partition; recorded where the API keeps who did something, e.g. an acknowledgement).</param>
public sealed record ApiCaller(Guid FleetId, ApiKeyRole Role, string KeyHash, Guid KeyId)
{
    private const string ItemKey = "FusionService.ApiCaller";

    /// <summary>When the key stops being accepted; null when it does not expire.</summary>
    public DateTimeOffset? ExpiresAt { get; init; }

    /// <summary>The caller stored on <paramref name="context"/> by the key filter.</summary>
    /// <exception cref="InvalidOperationException">The endpoint has no key filter.</exception>
    public static ApiCaller Of(HttpContext context)
    {
        ArgumentNullException.ThrowIfNull(context);
        return context.Items.TryGetValue(ItemKey, out var value) && value is ApiCaller caller
            ? caller
            : throw new InvalidOperationException("The endpoint does not require an API key.");
    }

    /// <summary>Stores the caller on <paramref name="context"/>.</summary>
    public void AttachTo(HttpContext context)
    {
        ArgumentNullException.ThrowIfNull(context);
        context.Items[ItemKey] = this;
    }
}
