// A copy of a vehicle track's current state for readers.
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;

namespace FusionService.Tracking;

/// <summary>The current state of a vehicle's track, as the grain hands it out.</summary>
/// <param name="TimeUs">Time of the state, Unix microseconds.</param>
/// <param name="Phase">Track phase (empty, awaiting_heading, running).</param>
/// <param name="LatDeg">Latitude, degrees (NaN without a position).</param>
/// <param name="LonDeg">Longitude, degrees (NaN without a position).</param>
/// <param name="State">State vector in the core's order and units (see <c>StateIndex</c>).</param>
/// <param name="Covariance">Covariance of <paramref name="State"/> (10 x 10), row-major.</param>
/// <param name="LastTimeUsBySensor">Time of the newest processed measurement per sensor kind code (0..3), Unix microseconds, or null.</param>
/// <param name="Resets">Number of track resets.</param>
/// <param name="GnssCorrelatedShare">Correlated share of the GNSS error model in use.</param>
/// <param name="GnssErrorTimeConstantS">Time constant of the GNSS error model in use, seconds.</param>
/// <param name="GnssErrorFitted">Whether that model is the track's own fit.</param>
/// <param name="GnssErrorStartedFrom">Where the track's fit started: "fleet" (its fleet's receivers) or "settings".</param>
[GenerateSerializer]
[Immutable]
[Alias("FusionService.Tracking.VehicleStateSnapshot")]
public sealed record VehicleStateSnapshot(
    [property: Id(0)] long TimeUs,
    [property: Id(1)] string Phase,
    [property: Id(2)] double LatDeg,
    [property: Id(3)] double LonDeg,
    [property: Id(4)] double[] State,
    [property: Id(5)] double[] Covariance,
    [property: Id(6)] long?[] LastTimeUsBySensor,
    [property: Id(7)] int Resets,
    [property: Id(8)] double GnssCorrelatedShare,
    [property: Id(9)] double GnssErrorTimeConstantS,
    [property: Id(10)] bool GnssErrorFitted,
    [property: Id(11)] string GnssErrorStartedFrom)
{
    /// <summary>The snapshot of a running track's state <paramref name="s"/>, or null while it is not running.</summary>
    internal static VehicleStateSnapshot? Of(TrackProcessor processor, in TrackState s, long?[] lastTimeUsBySensor)
    {
        if (!s.HasPlane || s.Phase != TrackPhase.Running)
        {
            return null;
        }

        var position = TrackProcessor.PositionOf(s);
        var x = new double[StateIndex.Count];
        var p = new double[StateIndex.Count * StateIndex.Count];
        for (int i = 0; i < x.Length; i++)
        {
            x[i] = s.X[i];
        }

        for (int i = 0; i < p.Length; i++)
        {
            p[i] = s.P[i];
        }

        const string phase = "running";
        (double share, double timeConstantS, bool fitted) = processor.GnssErrorModelOf(s);
        return new VehicleStateSnapshot(
            s.TimeUs, phase, position.LatitudeDeg, position.LongitudeDeg, x, p, lastTimeUsBySensor, s.Resets, share, timeConstantS, fitted,
            s.GnssErrorFit.HasStart ? "fleet" : "settings");
    }
}
