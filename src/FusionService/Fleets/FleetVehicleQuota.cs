// Admission of new vehicles against each fleet's vehicle quota.
using System.Collections.Concurrent;
using FusionService.Database;
using FusionService.Storage.Fleets;
using Microsoft.Extensions.Options;

namespace FusionService.Fleets;

/// <summary>
/// Keeps, per fleet that sends, the ids of its known vehicles and its quota (the fleet's own <c>max_vehicles</c>, else
/// <see cref="TenancyOptions.DefaultMaxVehicles"/>). A vehicle already known passes without a lookup; a new one is
/// admitted while the fleet has fewer vehicles than its quota. Both are read again from the store when a new vehicle
/// arrives and they are older than <see cref="TenancyOptions.QuotaCacheSeconds"/>. Several processes admitting new
/// vehicles of one fleet within that time can overshoot the quota by the vehicles each admitted.
/// </summary>
public sealed class FleetVehicleQuota(FusionDatabase database, IOptions<TenancyOptions> options, TimeProvider time)
{
    private readonly ConcurrentDictionary<Guid, FleetEntry> _fleets = new();

    /// <summary>
    /// Admits the vehicles of one batch: returns the new ones beyond the quota (empty when all may send) and the quota.
    /// </summary>
    /// <exception cref="Npgsql.NpgsqlException">The store cannot be read.</exception>
    public async Task<(IReadOnlySet<string> Refused, int Quota)> AdmitAsync(Guid fleetId, IReadOnlyCollection<string> vehicles, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(vehicles);
        var entry = _fleets.GetOrAdd(fleetId, _ => new FleetEntry());
        await entry.Lock.WaitAsync(cancellationToken).ConfigureAwait(false);
        try
        {
            if (entry.Known is { } known && vehicles.All(known.Contains))
            {
                return (EmptySet, entry.Quota);
            }

            var now = time.GetUtcNow();
            if (entry.Known is null || entry.ReadAt.AddSeconds(options.Value.QuotaCacheSeconds) <= now)
            {
                var admin = new FleetAdmin(database.DataSource);
                entry.Quota = await admin.GetVehicleQuotaAsync(fleetId, cancellationToken).ConfigureAwait(false) ?? options.Value.DefaultMaxVehicles;
                entry.Known = new HashSet<string>(await admin.VehicleIdsAsync(fleetId, cancellationToken).ConfigureAwait(false), StringComparer.Ordinal);
                entry.ReadAt = now;
            }

            HashSet<string>? refused = null;
            foreach (var vehicle in vehicles)
            {
                if (entry.Known.Contains(vehicle))
                {
                    continue;
                }

                if (entry.Known.Count < entry.Quota)
                {
                    entry.Known.Add(vehicle);
                }
                else
                {
                    (refused ??= new HashSet<string>(StringComparer.Ordinal)).Add(vehicle);
                }
            }

            return (refused ?? EmptySet, entry.Quota);
        }
        catch (KeyNotFoundException)
        {
            // The fleet is gone (deleted while its key was cached): nothing of it may be stored.
            return (new HashSet<string>(vehicles, StringComparer.Ordinal), 0);
        }
        finally
        {
            entry.Lock.Release();
        }
    }

    /// <summary>Forgets what this process knows of <paramref name="fleetId"/> (after its quota changed here).</summary>
    public void Forget(Guid fleetId) => _fleets.TryRemove(fleetId, out _);

    private static readonly IReadOnlySet<string> EmptySet = new HashSet<string>();

    private sealed class FleetEntry
    {
        public SemaphoreSlim Lock { get; } = new(1, 1);

        public HashSet<string>? Known { get; set; }

        public int Quota { get; set; }

        public DateTimeOffset ReadAt { get; set; }
    }
}
