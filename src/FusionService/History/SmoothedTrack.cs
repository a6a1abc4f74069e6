// The result of a smoothing replay for one request.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;

namespace FusionService.History;

/// <summary>Smoothed segments over a window and, when asked for, the wheel speeds and GNSS positions replayed to get them.</summary>
/// <param name="Segments">Smoothed segments in time order (instants before the window are dropped except the last one).</param>
/// <param name="DistanceInputs">Replayed wheel-speed and GNSS-position measurements in canonical order (from the start of
/// the replay, without those already in its starting checkpoint); empty unless the build was asked to keep them.</param>
/// <param name="FromCheckpoint">Whether the replay started from a stored checkpoint.</param>
/// <param name="Carried">The times the replayed track took the vehicle to be carried (towed, ferried, lifted), in time order.</param>
/// <remarks>Dispose it when the response is written: the segments' arrays go back to the builder's pool.</remarks>
internal sealed record SmoothedTrack(
    IReadOnlyList<SmoothedSegment> Segments, IReadOnlyList<Measurement> DistanceInputs, bool FromCheckpoint, IReadOnlyList<CarriedInterval> Carried)
    : IDisposable
{
    /// <summary>Gives the segments' arrays back (the segments are empty afterwards).</summary>
    public void Dispose()
    {
        foreach (SmoothedSegment segment in Segments)
        {
            segment.Dispose();
        }
    }
}
