using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>
/// Issue 12: a van whose telematics box sends no wheel speed (GNSS and IMU only) on the invented clean-sky rounds of
/// <see cref="RealisticDrives"/>. Before its standstill was judged from GNSS Doppler it integrated the Doppler noise at
/// every stop into phantom motion that the GNSS error states explained: 61 % of the time inside the 95 % ellipse, RMSE
/// 4.8 m against 2.1 m with wheels. Until a rejected inertial run widened the speed it had driven (see
/// TrackProcessor.Gated), its four drives below held 92.1 % filtered and 84.5 % smoothed, RMSE 1.39 x that with wheels.
/// The lower bound is the issue's 93 % (a product target, not a published value); the RMSE bound is this project's.
/// </summary>
public sealed class WheelLessVehicleTests(ITestOutputHelper output)
{
    [Fact]
    public void Issue12_a_van_without_wheel_speed_stands_still_at_its_stops_and_keeps_an_honest_ellipse()
    {
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        long count = 0, inside = 0, smoothedCount = 0, smoothedInside = 0, stillAtStops = 0, stopSamples = 0;
        double sumSq = 0, sumSqWheels = 0;
        long countWheels = 0;
        foreach (int seed in new[] { 1201, 1301, 1401, 1501 })
        {
            ScenarioRun run = RealisticDrives.CleanSky(seed).Generate();
            ReplayResult wheelLess = TrackReplay.Run(processor, TrackState.Empty, run.Measurements.Where(m => m.Kind != SensorKind.WheelSpeed));
            ReplayResult withWheels = TrackReplay.Run(processor, TrackState.Empty, run.Measurements);
            foreach ((Measurement m, MeasurementOutcome o) in wheelLess.Outcomes)
            {
                if (m.Kind == SensorKind.GnssVelocity && run.Truth.Covers(m.TimeUs) && IsDeepInStop(run.Truth, m.TimeUs))
                {
                    stopSamples++;
                    stillAtStops += o.Stationary ? 1 : 0;
                }
            }

            (double rmseRun, long n, long nInside) = TruthTally.Filtered(run, wheelLess);
            count += n;
            inside += nInside;
            sumSq += rmseRun * rmseRun * n;
            (_, long sn, long snInside) = TruthTally.Smoothed(run, wheelLess);
            smoothedCount += sn;
            smoothedInside += snInside;
            (double rmseWheelsRun, long nWheels, _) = TruthTally.Filtered(run, withWheels);
            countWheels += nWheels;
            sumSqWheels += rmseWheelsRun * rmseWheelsRun * nWheels;
        }

        double share = (double)inside / count, smoothedShare = (double)smoothedInside / smoothedCount, rmse = Math.Sqrt(sumSq / count), rmseWheels = Math.Sqrt(sumSqWheels / countWheels);
        double stillShare = (double)stillAtStops / stopSamples;
        output.WriteLine($"without wheels: inside 95 % {100 * share:F1} % filtered, {100 * smoothedShare:F1} % smoothed, RMSE {rmse:F2} m (with wheels {rmseWheels:F2} m); standstill applied at {100 * stillShare:F1} % of GNSS samples inside stops");
        Assert.True(stillShare >= 0.95, $"standstill at {100 * stillShare:F1} % of the samples inside stops");
        Assert.True(share >= 0.93, $"inside the filtered 95 % ellipse {100 * share:F1} % of the time");
        Assert.True(smoothedShare >= 0.93, $"inside the smoothed 95 % ellipse {100 * smoothedShare:F1} % of the time");
        Assert.True(rmse <= 1.25 * rmseWheels, $"RMSE {rmse:F2} m against {rmseWheels:F2} m with wheels");
    }

    /// <summary>True when the truth stands still from 5 s before to 5 s after <paramref name="timeUs"/>.</summary>
    private static bool IsDeepInStop(TruthTrajectory truth, long timeUs)
    {
        for (long t = timeUs - 5_000_000; t <= timeUs + 5_000_000; t += 1_000_000)
        {
            if (!truth.Covers(t) || truth.At(t).SpeedMps > 0)
            {
                return false;
            }
        }

        return true;
    }
}
