// The points of each kind of track, produced one at a time.
using System.Runtime.CompilerServices;
using FusionService.Audit;
using FusionService.Database;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Storage.History;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.History;

/// <summary>Produces the points of raw, filtered and smoothed tracks, decimated to the request's step.</summary>
internal static class TrackPointSources
{
    private const double RadToDeg = 180.0 / Math.PI;

    /// <summary>Stored GNSS fixes (with the speed and course of a velocity message at the same instant) and their outcomes.</summary>
    public static async IAsyncEnumerable<TrackPoint> RawAsync(
        FusionDatabase database, Guid fleetId, TrackRequest request, [EnumeratorCancellation] CancellationToken cancellationToken)
    {
        var reader = new TrackHistoryReader(database.ReadDataSource);
        var decimator = new Decimator(request.StepUs);
        TrackPoint? pending = null;
        int segment = 0;
        await foreach (var s in reader.StreamMeasurementsAsync(
            fleetId, request.Vehicle, request.FromUs, request.ToUs, (short)SensorKind.GnssPosition, (short)SensorKind.GnssVelocity, cancellationToken).ConfigureAwait(false))
        {
            if (s.Kind == (short)SensorKind.GnssVelocity)
            {
                if (pending is { } p && p.TimeUs == s.TimeUs && p.SpeedMps is null)
                {
                    pending = p with
                    {
                        SpeedMps = s.V0,
                        HeadingDeg = s.V1 is { } course && double.IsFinite(course) ? TrackProcessor.HeadingToCourse(TrackProcessor.CourseToHeading(course)) * RadToDeg : null,
                    };
                }

                continue;
            }

            if (pending is { } ready && decimator.Take(ready.TimeUs))
            {
                yield return ready;
            }

            if (s.TrackReset)
            {
                segment++;
            }

            // Negated when derived from HDOP (Measurement.Value2); the accuracy itself is the magnitude.
            double sigma = Math.Abs(s.V2 ?? double.NaN);
            var ellipse = double.IsFinite(sigma) && sigma > 0 ? ErrorEllipse.FromCovariance(sigma * sigma, sigma * sigma, 0) : default;
            pending = new TrackPoint(
                s.TimeUs, s.V0, s.V1 ?? double.NaN, null, null, ellipse.SemiMajorM, ellipse.SemiMinorM, ellipse.OrientationRad * RadToDeg, segment,
                DecisionNames.Of(s.Outcome), s.Nis, double.IsFinite(sigma) ? sigma : null, s.TrackReset);
        }

        if (pending is { } last && decimator.Take(last.TimeUs))
        {
            yield return last;
        }
    }

    /// <summary>Stored fused states of the live filter.</summary>
    public static async IAsyncEnumerable<TrackPoint> FilteredAsync(
        FusionDatabase database, Guid fleetId, TrackRequest request, [EnumeratorCancellation] CancellationToken cancellationToken)
    {
        var reader = new TrackHistoryReader(database.ReadDataSource);
        var decimator = new Decimator(request.StepUs);
        await foreach (var r in reader.StreamFusedStatesAsync(fleetId, request.Vehicle, request.FromUs, request.ToUs, cancellationToken).ConfigureAwait(false))
        {
            if (decimator.Take(r.TimeUs))
            {
                yield return new TrackPoint(
                    r.TimeUs, r.LatDeg, r.LonDeg, TrackProcessor.HeadingToCourse(r.HeadingRad) * RadToDeg, r.SpeedMps,
                    r.EllipseMajorM, r.EllipseMinorM, r.EllipseOrientationRad * RadToDeg, 0);
            }
        }
    }

    /// <summary>Smoothed states inside the window; <paramref name="track"/> is disposed when the enumeration ends.</summary>
    public static async IAsyncEnumerable<TrackPoint> SmoothedAsync(SmoothedTrack track, TrackRequest request)
    {
        using (track)
        {
            var decimator = new Decimator(request.StepUs);
            for (int si = 0; si < track.Segments.Count; si++)
            {
                SmoothedSegment s = track.Segments[si];
                for (int k = 0; k < s.Count; k++)
                {
                    long t = s.TimesUs[k];
                    if (t < request.FromUs || t >= request.ToUs || !decimator.Take(t))
                    {
                        continue;
                    }

                    yield return ToPoint(s, k, si);
                }
            }
        }

        await Task.CompletedTask.ConfigureAwait(false);
    }

    /// <summary>The API point of smoothed instant <paramref name="k"/>.</summary>
    public static TrackPoint ToPoint(SmoothedSegment s, int k, int segment)
    {
        var state = new TrackState { X = s.Means[k], Plane = s.Planes[k], HasPlane = true };
        var position = TrackProcessor.PositionOf(state);
        ref readonly var p = ref s.Covariances[k];
        var ellipse = ErrorEllipse.FromCovariance(
            Math.Max(p[(EastM * Count) + EastM], 0), Math.Max(p[(NorthM * Count) + NorthM], 0), p[(EastM * Count) + NorthM]);
        return new TrackPoint(
            s.TimesUs[k], position.LatitudeDeg, position.LongitudeDeg, TrackProcessor.HeadingToCourse(s.Means[k][HeadingRad]) * RadToDeg,
            s.Means[k][SpeedMps], ellipse.SemiMajorM, ellipse.SemiMinorM, ellipse.OrientationRad * RadToDeg, segment);
    }

    /// <summary>Keeps a point when it is the first or at least the step after the last kept one.</summary>
    private sealed class Decimator(long stepUs)
    {
        private long _lastUs = long.MinValue;

        public bool Take(long timeUs)
        {
            if (_lastUs != long.MinValue && timeUs - _lastUs < stepUs)
            {
                return false;
            }

            _lastUs = timeUs;
            return true;
        }
    }
}
