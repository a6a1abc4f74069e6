// Resolves bearer secrets to fleet and role, with a short cache of valid and of unknown keys.
using System.Collections.Concurrent;
using FusionService.Database;
using FusionService.Storage.Fleets;
using Microsoft.Extensions.Options;

namespace FusionService.Security;

/// <summary>
/// Resolves an API secret to its fleet and role through <see cref="FleetAdmin"/>. Valid keys are remembered for
/// <see cref="SecurityOptions.KeyCacheSeconds"/> (never past their expiry), unknown, revoked and expired ones for
/// <see cref="SecurityOptions.UnknownKeyCacheSeconds"/>, so a client repeating a bad key costs no database lookup. A
/// revocation through this process applies at once (<see cref="Forget"/>); one by another process within the cache time.
/// </summary>
public sealed class ApiKeyResolver(FusionDatabase database, IOptions<SecurityOptions> options, TimeProvider time)
{
    private readonly ConcurrentDictionary<string, (ApiCaller Caller, DateTimeOffset Until)> _cache = new(StringComparer.Ordinal);
    private readonly ConcurrentDictionary<string, DateTimeOffset> _unknown = new(StringComparer.Ordinal);

    /// <summary>The caller of <paramref name="secret"/>, or null when no valid key has it.</summary>
    public async Task<ApiCaller?> ResolveAsync(string secret, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(secret);
        if (!secret.StartsWith(FleetAdmin.SecretPrefix, StringComparison.Ordinal) || secret.Length > 200)
        {
            return null;
        }

        var hash = Convert.ToHexStringLower(FleetAdmin.HashSecret(secret));
        if (TryCached(hash) is { } cachedCaller)
        {
            return cachedCaller;
        }

        var now = time.GetUtcNow();
        if (_unknown.TryGetValue(hash, out var unknownUntil))
        {
            if (unknownUntil > now)
            {
                return null;
            }

            _unknown.TryRemove(hash, out _);
        }

        var identity = await new FleetAdmin(database.DataSource).ResolveApiKeyAsync(secret, cancellationToken).ConfigureAwait(false);
        if (identity is not { } found)
        {
            _cache.TryRemove(hash, out _);
            RememberUnknown(hash, now);
            return null;
        }

        var caller = new ApiCaller(found.FleetId, found.Role, hash, found.KeyId) { ExpiresAt = found.ExpiresAt };
        var until = now.AddSeconds(options.Value.KeyCacheSeconds);
        if (found.ExpiresAt is { } expires && expires < until)
        {
            until = expires;
        }

        _cache[hash] = (caller, until);
        return caller;
    }

    /// <summary>The caller of a secret this process accepted within the cache time, without a lookup; null otherwise.</summary>
    public ApiCaller? TryCached(string keyHash)
    {
        ArgumentNullException.ThrowIfNull(keyHash);
        return _cache.TryGetValue(keyHash, out var cached) && cached.Until > time.GetUtcNow() ? cached.Caller : null;
    }

    /// <summary>Drops the cached entries of a key (after its revocation or rotation), so it is looked up again.</summary>
    public void Forget(Guid keyId)
    {
        foreach (var (hash, entry) in _cache)
        {
            if (entry.Caller.KeyId == keyId)
            {
                _cache.TryRemove(hash, out _);
            }
        }
    }

    private void RememberUnknown(string hash, DateTimeOffset now)
    {
        var settings = options.Value;
        if (settings.UnknownKeyCacheSeconds == 0)
        {
            return;
        }

        if (_unknown.Count >= settings.UnknownKeyCacheEntries)
        {
            foreach (var (old, until) in _unknown)
            {
                if (until <= now)
                {
                    _unknown.TryRemove(old, out _);
                }
            }

            if (_unknown.Count >= settings.UnknownKeyCacheEntries)
            {
                _unknown.Clear();
            }
        }

        _unknown[hash] = now.AddSeconds(settings.UnknownKeyCacheSeconds);
    }
}
