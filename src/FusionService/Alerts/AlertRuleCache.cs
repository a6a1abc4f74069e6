// Per-fleet rule settings with a short cache.
using System.Collections.Concurrent;
using System.Text.Json;
using FusionService.Database;
using FusionService.Storage.Alerts;
using FusionService.Storage.Failures;
using Microsoft.Extensions.Options;
using Npgsql;

namespace FusionService.Alerts;

/// <summary>
/// Loads each fleet's <see cref="AlertRuleSettings"/> from the store and keeps them for
/// <see cref="AlertOptions.RuleCacheSeconds"/>; a fleet without stored settings gets the defaults. When the store cannot
/// be read the last known (or default) settings are used.
/// </summary>
public sealed class AlertRuleCache(FusionDatabase database, IOptions<AlertOptions> options, TimeProvider time, ILogger<AlertRuleCache> logger)
{
    private readonly ConcurrentDictionary<Guid, (AlertRuleSettings Settings, DateTimeOffset Until)> _cache = new();

    /// <summary>The fleet's settings.</summary>
    public async Task<AlertRuleSettings> GetAsync(Guid fleetId, CancellationToken cancellationToken = default)
    {
        var now = time.GetUtcNow();
        if (_cache.TryGetValue(fleetId, out var cached) && cached.Until > now)
        {
            return cached.Settings;
        }

        try
        {
            var json = await new AlertRuleRepository(database.DataSource).GetAsync(fleetId, cancellationToken).ConfigureAwait(false);
            var settings = json is null ? AlertRuleSettings.Default : JsonSerializer.Deserialize<AlertRuleSettings>(json, AlertJson.Options) ?? AlertRuleSettings.Default;
            Set(fleetId, settings);
            return settings;
        }
        catch (Exception ex) when (TransientDatabaseError.Is(ex) || ex is JsonException)
        {
            logger.LogWarning(ex, "Alert rules of fleet {Fleet} could not be read; using the last known settings", fleetId);
            return cached.Settings ?? AlertRuleSettings.Default;
        }
    }

    /// <summary>Remembers settings just stored for the fleet.</summary>
    public void Set(Guid fleetId, AlertRuleSettings settings) =>
        _cache[fleetId] = (settings, time.GetUtcNow().AddSeconds(options.Value.RuleCacheSeconds));
}
