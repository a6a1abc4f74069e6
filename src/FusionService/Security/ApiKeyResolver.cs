// Resolves bearer secrets to fleet and role, with a short positive cache.
using System.Collections.Concurrent;
using FusionService.Database;
using FusionService.Storage.Fleets;
using Microsoft.Extensions.Options;

namespace FusionService.Security;

/// <summary>
/// Resolves an API secret to its fleet and role through <see cref="FleetAdmin"/>. Valid keys are remembered for
/// <see cref="SecurityOptions.KeyCacheSeconds"/> (so a revocation takes at most that long to apply); unknown keys
/// are never cached.
/// </summary>
public sealed class ApiKeyResolver(FusionDatabase database, IOptions<SecurityOptions> options, TimeProvider time)
{
    private readonly ConcurrentDictionary<string, (ApiCaller Caller, DateTimeOffset Until)> _cache = new(StringComparer.Ordinal);

    /// <summary>The caller of <paramref name="secret"/>, or null when no valid key has it.</summary>
    public async Task<ApiCaller?> ResolveAsync(string secret, CancellationToken cancellationToken)
    {
        var hash = Convert.ToHexStringLower(FleetAdmin.HashSecret(secret));
        var now = time.GetUtcNow();
        if (_cache.TryGetValue(hash, out var cached) && cached.Until > now)
        {
            return cached.Caller;
        }

        var identity = await new FleetAdmin(database.DataSource).ResolveApiKeyAsync(secret, cancellationToken).ConfigureAwait(false);
        if (identity is not { } found)
        {
            _cache.TryRemove(hash, out _);
            return null;
        }

        var caller = new ApiCaller(found.FleetId, found.Role, hash, found.KeyId);
        _cache[hash] = (caller, now.AddSeconds(options.Value.KeyCacheSeconds));
        return caller;
    }
}
