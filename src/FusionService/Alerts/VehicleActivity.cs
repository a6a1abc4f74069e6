// When each vehicle was last heard from.
using System.Collections.Concurrent;

namespace FusionService.Alerts;

/// <summary>
/// The newest receipt time (server clock) of every vehicle this process has heard from recently, fed by the track grains
/// after each batch and seeded from the store at start-up; read by <see cref="VehicleSilenceScanner"/>, which evicts the
/// entries of vehicles silent for longer than <see cref="AlertOptions.SilenceLookbackHours"/>, so the table holds only
/// recently active vehicles. A vehicle noted while it had no entry (new, evicted, or heard before the start-up seed) is
/// marked fresh until the scanner takes the mark. In a multi-silo deployment each silo knows only its own grains'
/// vehicles, which is what its scanner needs.
/// </summary>
public sealed class VehicleActivity
{
    private readonly ConcurrentDictionary<(Guid FleetId, string VehicleId), DateTimeOffset> _last = new();
    private readonly ConcurrentDictionary<(Guid FleetId, string VehicleId), byte> _fresh = new();

    /// <summary>Vehicles in the table now.</summary>
    public int Count => _last.Count;

    /// <summary>Records a receipt (never moves a vehicle's time back).</summary>
    public void Note(Guid fleetId, string vehicleId, DateTimeOffset receivedAt)
    {
        var key = (fleetId, vehicleId);
        if (_last.TryAdd(key, receivedAt))
        {
            _fresh[key] = 0;
            return;
        }

        _last.AddOrUpdate(key, receivedAt, (_, old) => old >= receivedAt ? old : receivedAt);
    }

    /// <summary>Records a receipt read from the store at start-up (never marks the vehicle fresh).</summary>
    public void Seed(Guid fleetId, string vehicleId, DateTimeOffset receivedAt) =>
        _last.AddOrUpdate((fleetId, vehicleId), receivedAt, (_, old) => old >= receivedAt ? old : receivedAt);

    /// <summary>True (once) when the vehicle was noted while it had no entry.</summary>
    public bool TakeFresh(Guid fleetId, string vehicleId) => _fresh.TryRemove((fleetId, vehicleId), out _);

    /// <summary>
    /// A snapshot of every vehicle and its newest receipt time, taken under the dictionary's locks
    /// (<see cref="ConcurrentDictionary{TKey, TValue}.ToArray"/>): a collection expression over it sizes its array by the
    /// count and then copies, which throws when vehicles are added in between (it stopped the host under load).
    /// </summary>
    public IReadOnlyList<KeyValuePair<(Guid FleetId, string VehicleId), DateTimeOffset>> Snapshot() => _last.ToArray();

    /// <summary>
    /// Removes the vehicles last heard from before <paramref name="before"/>, of those in <paramref name="judged"/> when it
    /// is given (the <see cref="Snapshot"/> a scan judged: a vehicle noted after it was taken waits for the next scan, so
    /// it is never evicted before its silence was judged once); returns them.
    /// </summary>
    public IReadOnlyList<(Guid FleetId, string VehicleId)> EvictSilentSince(
        DateTimeOffset before, IReadOnlyList<KeyValuePair<(Guid FleetId, string VehicleId), DateTimeOffset>>? judged = null)
    {
        var evicted = new List<(Guid, string)>();
        foreach (var (key, last) in judged ?? Snapshot())
        {
            // Removes the entry only if no newer receipt arrived meanwhile.
            if (last < before && _last.TryRemove(new KeyValuePair<(Guid, string), DateTimeOffset>(key, last)))
            {
                _fresh.TryRemove(key, out _);
                evicted.Add(key);
            }
        }

        return evicted;
    }
}
