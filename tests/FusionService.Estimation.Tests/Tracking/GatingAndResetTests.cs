using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using Xunit.Abstractions;

namespace FusionService.Estimation.Tests.Tracking;

public sealed class GatingAndResetTests(ITestOutputHelper output)
{
    [Fact]
    public void Injected_30_to_100_m_jumps_are_rejected()
    {
        var drive = SimpleDrive.Create(seed: 31, durationS: 1800, gnssSigmaM: 3.0, outlierProbability: 0.05);
        var log = new OutcomeLog();
        var track = new VehicleTrack(new TrackOptions(), NoiseProfile.DeliveryVan);
        foreach (Measurement m in drive.Measurements)
        {
            track.Process(m, log);
        }

        int injected = 0, rejected = 0;
        foreach (var ((_, kind, key), outcome) in log.Final)
        {
            if (kind == SensorKind.GnssPosition && drive.Outliers.Contains(key) && outcome.Kind != OutcomeKind.Initialising)
            {
                injected++;
                rejected += outcome.Kind == OutcomeKind.Gated ? 1 : 0;
            }
        }

        output.WriteLine($"{rejected} of {injected} injected jumps rejected");
        Assert.True(injected >= 50, $"only {injected} jumps injected");
        Assert.True(rejected >= 0.99 * injected, $"{rejected} of {injected} rejected");
        Assert.Equal(0, track.Current.Resets);
    }

    [Fact]
    public void A_real_relocation_resets_the_track_at_the_new_place()
    {
        // A van moved while its GNSS was silent: fixes continue 3 km away (no GNSS speed) while the wheel reads a
        // standstill. Positions alone relocate a standing van only after TrackOptions.ResetAfterStationaryS (issue 12:
        // multipath beside a building must not relocate it), so the data runs 180 s.
        var drive = SimpleDrive.Create(seed: 41, durationS: 120);
        var moved = new List<Measurement>(drive.Measurements);
        long lastUs = drive.Measurements[^1].TimeUs;
        var plane = new LocalTangentPlane(SimpleDrive.Origin);
        ulong key = 1_000_000;
        var rnd = new Random(3);
        for (int s = 1; s <= 180; s++)
        {
            long t = lastUs + (s * 1_000_000L);
            var p = plane.ToGeodetic(new EnuPoint(3000 + (3 * SimpleDrive.Gauss(rnd)), 2000 + (3 * SimpleDrive.Gauss(rnd)), 0));
            moved.Add(Measurement.GnssPosition(t, key++, p.LatitudeDeg, p.LongitudeDeg, 3.0));
            for (int k = 0; k < 10; k++)
            {
                moved.Add(Measurement.WheelSpeed(t + (k * 100_000L), key++, 0.0));
            }
        }

        moved.Sort((a, b) => VehicleTrack.CompareKey(a, b));
        var track = new VehicleTrack(new TrackOptions(), NoiseProfile.DeliveryVan);
        var outcomes = moved.Select(m => (m, track.Process(m))).ToList();
        var reset = outcomes.Where(o => o.Item2.Kind == OutcomeKind.TrackReset).ToList();
        Assert.Single(reset);
        double afterS = (reset[0].m.TimeUs - lastUs) / 1e6;
        output.WriteLine($"reset {afterS:F0} s after the relocation, {reset[0].Item2.PositionShiftM:F0} m from the track");
        Assert.InRange(afterS, new TrackOptions().ResetAfterStationaryS, new TrackOptions().ResetAfterStationaryS + 15);
        Assert.Equal(TrackPhase.Running, track.Current.Phase);
        var here = plane.ToEnu(TrackProcessor.PositionOf(track.Current));
        AssertNear.Equal(3000, here.EastM, 10, "east after reset, m");
        AssertNear.Equal(2000, here.NorthM, 10, "north after reset, m");
    }

    [Fact]
    public void Parked_van_accumulates_under_one_metre_in_ten_minutes()
    {
        var drive = SimpleDrive.Create(seed: 61, durationS: 640, gnssSigmaM: 5.0, stopFromS: 0);
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        ReplayResult replay = TrackReplay.Run(processor, TrackState.Empty, drive.Measurements);
        long from = SimpleDrive.StartUs + 30_000_000, to = from + 600_000_000;
        DistanceEstimate d = DistanceIntegrator.Integrate(replay.Smoothed, from, to);

        double rawPolyline = 0;
        var fixes = drive.Measurements.Where(m => m.Kind == SensorKind.GnssPosition && m.TimeUs >= from && m.TimeUs <= to).ToList();
        for (int i = 1; i < fixes.Count; i++)
        {
            rawPolyline += VincentyInverse.Compute(
                GeodeticPoint.FromDegrees(fixes[i - 1].Value0, fixes[i - 1].Value1),
                GeodeticPoint.FromDegrees(fixes[i].Value0, fixes[i].Value1)).DistanceM;
        }

        output.WriteLine($"parked 600 s: smoothed distance {d.DistanceM:F3} ± {d.SigmaM:F3} m, stationary {d.StationaryS:F0} s; raw GNSS polyline {rawPolyline:F0} m");
        Assert.True(Math.Abs(d.DistanceM) < 1.0, $"distance {d.DistanceM} m");
        Assert.True(d.StationaryS > 590, $"stationary {d.StationaryS} s");
    }
}
