// The vehicles' ten-minute windows this process wrote chunks into, waiting for their fold.
using System.Collections.Concurrent;
using FusionService.Storage.Measurements;
using Microsoft.Extensions.Options;

namespace FusionService.Database;

/// <summary>
/// The windows (vehicle and ten-minute window of measurement time) into which this process's commits wrote chunks since
/// their last fold, each with when it was last written; <see cref="ChunkFoldService"/> takes those left alone long
/// enough. Kept in memory: a graceful stop folds what it holds (<see cref="ChunkFoldService"/>); after a crash, windows not
/// folded yet stay as they are (correct, only larger).
/// With folding off (<see cref="DatabaseOptions.ChunkFoldDelayS"/> 0) nothing is noted, so nothing accumulates.
/// </summary>
public sealed class ChunkFoldQueue(TimeProvider time, IOptions<DatabaseOptions> options)
{
    private readonly ConcurrentDictionary<(Guid FleetId, string VehicleId, long Window), long> _written = new();
    private readonly bool _folding = options.Value.ChunkFoldDelayS > 0;

    /// <summary>Number of windows waiting.</summary>
    public int Count => _written.Count;

    /// <summary>Notes the windows of measurements a commit stored, as written now.</summary>
    public void Note(IEnumerable<MeasurementKey> stored)
    {
        ArgumentNullException.ThrowIfNull(stored);
        if (!_folding)
        {
            return;
        }

        long now = time.GetUtcNow().UtcTicks;
        (Guid, string, long) previous = default;
        foreach (var key in stored)
        {
            var window = (key.FleetId, key.VehicleId, MeasurementChunks.WindowOf(key.TimeUs));
            if (window != previous)
            {
                _written[window] = now;
                previous = window;
            }
        }
    }

    /// <summary>Takes the windows no commit wrote into for at least <paramref name="quiet"/>.</summary>
    public List<(Guid FleetId, string VehicleId, long Window)> TakeQuiet(TimeSpan quiet)
    {
        long before = time.GetUtcNow().UtcTicks - quiet.Ticks;
        var taken = new List<(Guid FleetId, string VehicleId, long Window)>();
        foreach (var (window, written) in _written)
        {
            // Removed only if not written again meanwhile.
            if (written <= before && _written.TryRemove(new KeyValuePair<(Guid, string, long), long>(window, written)))
            {
                taken.Add(window);
            }
        }

        return taken;
    }

    /// <summary>Puts back windows whose fold did not run, to be taken again at once (unless written again meanwhile).</summary>
    public void Return(IEnumerable<(Guid FleetId, string VehicleId, long Window)> windows)
    {
        ArgumentNullException.ThrowIfNull(windows);
        foreach (var window in windows)
        {
            _written.TryAdd(window, long.MinValue);
        }
    }
}
