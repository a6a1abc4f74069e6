using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tests.Tracking;
using FusionService.Estimation.Tracking;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Smoothing;

public sealed class VehicleSmootherTests(ITestOutputHelper output)
{
    [Fact]
    public void Smoothed_track_beats_filtered_on_a_simple_drive()
    {
        var drive = SimpleDrive.Create(seed: 11, durationS: 400, gyroBiasRps: 0.005, wheelScale: 0.98);
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        ReplayResult result = TrackReplay.Run(processor, TrackState.Empty, drive.Measurements);
        var truth = drive.Truth.ToDictionary(t => t.TimeUs, t => t.Truth);
        var plane = new LocalTangentPlane(SimpleDrive.Origin);
        Assert.Single(result.Smoothed);
        SmoothedSegment s = result.Smoothed[0];
        var forward = result.Forward[0];
        double filteredSq = 0, smoothedSq = 0;
        for (int k = 0; k < s.Count; k++)
        {
            var t = truth[s.TimesUs[k]];
            var f = plane.ToEnu(forward[k].Plane.ToGeodetic(new EnuPoint(forward[k].Filtered[EastM], forward[k].Filtered[NorthM])));
            var m = plane.ToEnu(s.Planes[k].ToGeodetic(new EnuPoint(s.Means[k][EastM], s.Means[k][NorthM])));
            filteredSq += Math.Pow(f.EastM - t[EastM], 2) + Math.Pow(f.NorthM - t[NorthM], 2);
            smoothedSq += Math.Pow(m.EastM - t[EastM], 2) + Math.Pow(m.NorthM - t[NorthM], 2);
        }

        double filtered = Math.Sqrt(filteredSq / s.Count), smoothed = Math.Sqrt(smoothedSq / s.Count);
        DistanceEstimate d = DistanceIntegrator.Integrate(result.Smoothed, s.TimesUs[0], s.TimesUs[^1]);
        double trueDistance = 0;
        for (int i = 1; i < drive.Truth.Count; i++)
        {
            if (drive.Truth[i].TimeUs > s.TimesUs[0] && drive.Truth[i].TimeUs <= s.TimesUs[^1])
            {
                var a = drive.Truth[i - 1].Truth;
                var b = drive.Truth[i].Truth;
                trueDistance += Math.Sqrt(Math.Pow(b[EastM] - a[EastM], 2) + Math.Pow(b[NorthM] - a[NorthM], 2));
            }
        }

        output.WriteLine($"position RMSE filtered {filtered:F3} m, smoothed {smoothed:F3} m; distance {d.DistanceM:F1} ± {d.SigmaM:F2} m vs truth {trueDistance:F1} m");
        Assert.True(smoothed < filtered, $"smoothed {smoothed} not below filtered {filtered}");
        Assert.True(Math.Abs(d.DistanceM - trueDistance) < 3 * d.SigmaM + 1.0);
    }
}
