// Which posteriors of a track are stored as fused states.
using FusionService.Estimation.Measurements;

namespace FusionService.Tracking;

/// <summary>
/// Decides which running posteriors become fused-state rows: every one at a GNSS position epoch, and otherwise at least
/// one per <paramref name="intervalUs"/> of data time (<see cref="TrackGrainOptions.FusedStateIntervalS"/>); a posterior
/// older than the last one taken (re-processing after late data) is always taken.
/// </summary>
internal sealed class FusedStateSampler(long intervalUs)
{
    private long _lastTakenUs = long.MinValue;

    /// <summary>Whether the posterior at <paramref name="timeUs"/> after a measurement of <paramref name="sensor"/> is stored; remembers it when so.</summary>
    public bool Take(SensorKind sensor, long timeUs)
    {
        if (sensor == SensorKind.GnssPosition || timeUs < _lastTakenUs || _lastTakenUs == long.MinValue || timeUs - _lastTakenUs >= intervalUs)
        {
            _lastTakenUs = timeUs;
            return true;
        }

        return false;
    }
}
