using FusionService.Estimation.Geodesy;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Tracking;

public sealed class TrackSmokeTests(ITestOutputHelper output)
{
    [Fact]
    public void Track_follows_a_simple_drive()
    {
        var drive = SimpleDrive.Create(seed: 7, gyroBiasRps: 0.0087, wheelScale: 1.03);
        var track = new VehicleTrack(new TrackOptions(), NoiseProfile.DeliveryVan);
        var plane = new LocalTangentPlane(SimpleDrive.Origin);
        var truthByTime = drive.Truth.ToDictionary(t => t.TimeUs, t => t.Truth);
        double sumSq = 0;
        int n = 0, gated = 0;
        foreach (var m in drive.Measurements)
        {
            var outcome = track.Process(m);
            if (outcome.Kind == OutcomeKind.Gated)
            {
                gated++;
            }

            if (m.Kind == FusionService.Estimation.Measurements.SensorKind.GnssPosition && track.Current.Phase == TrackPhase.Running)
            {
                var truth = truthByTime[m.TimeUs];
                var est = plane.ToEnu(TrackProcessor.PositionOf(track.Current));
                sumSq += Math.Pow(est.EastM - truth[EastM], 2) + Math.Pow(est.NorthM - truth[NorthM], 2);
                n++;
            }
        }

        double rmse = Math.Sqrt(sumSq / n);
        output.WriteLine($"rmse {rmse:F2} m over {n} fixes, gated {gated}, bias {track.Current.X[GyroBiasRps]:F5}, scale {track.Current.X[WheelScale]:F4}");
        Assert.True(rmse < 3.0, $"rmse {rmse}");
    }
}
