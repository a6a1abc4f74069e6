// The keys of the caller's fleet.
namespace FusionService.Fleets;

/// <summary>Every API key of the caller's fleet, revoked and expired ones included, oldest first.</summary>
/// <param name="Keys">The keys, without secrets.</param>
public sealed record ApiKeyListResponse(IReadOnlyList<ApiKeyResponse> Keys);
