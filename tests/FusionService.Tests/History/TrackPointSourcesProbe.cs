// Test access to the position of a smoothed instant as the service reports it.
using FusionService.Estimation.Smoothing;

namespace FusionService.Tests.History;

/// <summary>Calls the service's own conversion of a smoothed instant to latitude and longitude.</summary>
internal static class TrackPointSourcesProbe
{
    public static (double LatDeg, double LonDeg) Position(SmoothedSegment segment, int k)
    {
        var point = FusionService.History.TrackPointSources.ToPoint(segment, k, 0);
        return (point.LatDeg, point.LonDeg);
    }
}
