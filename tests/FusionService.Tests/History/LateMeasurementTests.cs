// GNSS fixes that arrive after the live filter's window: stored as too late, absent from the filtered track, used by the smoothed one.
using System.Globalization;
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Tests.Infrastructure;
using Xunit.Abstractions;

namespace FusionService.Tests.History;

[Collection(ServiceTests.Name)]
public sealed class LateMeasurementTests(ServiceFixture fixture, ITestOutputHelper output)
{
    private const double MetresPerDegreeLatitude = 111_320.0;

    [Fact]
    public async Task Issue4_fixes_too_late_for_the_live_filter_pull_the_smoothed_track_toward_them()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-late";
        var drive = HistoryDrive.Create(Vehicle, seed: 6200);

        // Hold back every GNSS message of a 30 s stretch and move those fixes 6 m north (invented, so the effect is visible).
        long lateFrom = drive.StartUs + 200_000_000, lateTo = lateFrom + 30_000_000;
        var messages = drive.Drive.Messages;
        bool IsLate(int i) => messages[i].Core[0].Kind == SensorKind.GnssPosition && messages[i].Core[0].TimeUs >= lateFrom && messages[i].Core[0].TimeUs < lateTo;
        const double ShiftM = 6.0;
        var lateFixes = new List<Measurement>();
        var lateCore = new List<Measurement>();
        for (int i = 0; i < messages.Count; i++)
        {
            if (!IsLate(i))
            {
                continue;
            }

            var message = messages[i].Message;
            double lat = message["lat_deg"]!.GetValue<double>() + (ShiftM / MetresPerDegreeLatitude);
            message["lat_deg"] = lat;
            var fix = messages[i].Core[0];
            var moved = Measurement.GnssPosition(fix.TimeUs, fix.MessageKey, lat, fix.Value1, fix.Value2);
            lateFixes.Add(moved);
            lateCore.Add(moved);
            lateCore.AddRange(messages[i].Core.Skip(1));
        }

        await drive.IngestAsync(fixture, fleet, i => !IsLate(i));
        await drive.IngestAsync(fixture, fleet, IsLate);

        using var read = fixture.Client(fleet.ReadKey);
        long from = drive.StartUs, to = drive.EndUs + 1_000_000;
        var raw = (await HistoryDrive.TrackJsonAsync(read, Vehicle, lateFrom, lateTo, "raw")).GetProperty("points").EnumerateArray().ToList();
        Assert.Equal(lateFixes.Count, raw.Count);
        Assert.All(raw, p => Assert.Equal("too_late", p.GetProperty("outcome").GetString()));

        var smoothed = (await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "smoothed")).GetProperty("points").EnumerateArray()
            .ToDictionary(p => TrackHistoryTests.TimeUs(p.GetProperty("time").GetString()!), p => (Lat: p.GetProperty("lat_deg").GetDouble(), Lon: p.GetProperty("lon_deg").GetDouble()));
        var filtered = (await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "filtered")).GetProperty("points").EnumerateArray()
            .ToDictionary(p => TrackHistoryTests.TimeUs(p.GetProperty("time").GetString()!), p => (Lat: p.GetProperty("lat_deg").GetDouble(), Lon: p.GetProperty("lon_deg").GetDouble()));

        // The same smoother run directly on the stored measurements without the late fixes: what the track would be
        // had they never arrived.
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        var onTime = messages.Where((_, i) => !IsLate(i)).SelectMany(m => m.Core).ToList();
        onTime.Sort((a, b) => VehicleTrack.CompareKey(a, b));
        var withoutLate = CompactedTrackReplay.Run(processor, TrackState.Empty, onTime, 1_000_000);
        var withoutLateNorth = new Dictionary<long, double>();
        foreach (var s in withoutLate)
        {
            for (int k = 0; k < s.Count; k++)
            {
                var point = TrackPointSourcesProbe.Position(s, k);
                withoutLateNorth[s.TimesUs[k]] = point.LatDeg;
            }
        }

        // The live filter run directly on the on-time measurements: every posterior inside the late stretch.
        var filterOracle = new Dictionary<long, List<(double Lat, double Lon)>>();
        TrackState state = TrackState.Empty;
        foreach (var m in onTime)
        {
            processor.Process(ref state, m);
            if (state.Phase == TrackPhase.Running && m.TimeUs >= lateFrom - 5_000_000 && m.TimeUs < lateTo + 5_000_000)
            {
                var position = TrackProcessor.PositionOf(state);
                if (!filterOracle.TryGetValue(m.TimeUs, out var list))
                {
                    filterOracle[m.TimeUs] = list = [];
                }

                list.Add((position.LatitudeDeg, position.LongitudeDeg));
            }
        }

        // ... and the smoother on every stored measurement, late fixes included.
        var all = onTime.Concat(lateCore).ToList();
        all.Sort((a, b) => VehicleTrack.CompareKey(a, b));
        var withLate = CompactedTrackReplay.Run(processor, TrackState.Empty, all, 1_000_000);
        var withLatePoints = new Dictionary<long, (double LatDeg, double LonDeg)>();
        foreach (var s in withLate)
        {
            for (int k = 0; k < s.Count; k++)
            {
                withLatePoints[s.TimesUs[k]] = TrackPointSourcesProbe.Position(s, k);
            }
        }

        double smoothedShift = 0;
        int n = 0, filteredCompared = 0;
        foreach (var (t, fi) in filtered.Where(f => f.Key >= lateFrom && f.Key < lateTo))
        {
            // 1e-8 degrees is about 1 mm.
            double nearest = filterOracle[t].Min(o => Math.Max(Math.Abs(o.Lat - fi.Lat), Math.Abs(o.Lon - fi.Lon)));
            AssertNear.Equal(0, nearest, 1e-8, "filtered position against the filter without the late fixes (deg)");
            filteredCompared++;
        }

        foreach (var fix in lateFixes)
        {
            if (!smoothed.TryGetValue(fix.TimeUs, out var sm) || !withoutLateNorth.TryGetValue(fix.TimeUs, out double baseLat))
            {
                continue;
            }

            var expected = withLatePoints[fix.TimeUs];
            AssertNear.Equal(expected.LatDeg, sm.Lat, 1e-8, "smoothed latitude against the smoother with the late fixes (deg)");
            AssertNear.Equal(expected.LonDeg, sm.Lon, 1e-8, "smoothed longitude against the smoother with the late fixes (deg)");
            smoothedShift += (sm.Lat - baseLat) * MetresPerDegreeLatitude;
            n++;
        }

        smoothedShift /= n;
        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"{lateFixes.Count} fixes stored too_late; the filtered track equals the filter without them at {filteredCompared} states; "
            + $"at {n} late instants the smoothed track equals the smoother with them and lies {smoothedShift:F2} m north of the smoothing without them (fixes moved {ShiftM} m north)"));
        Assert.True(n >= lateFixes.Count - 2, $"only {n} of {lateFixes.Count} late instants in the smoothed track");
        Assert.True(filteredCompared >= 25, $"only {filteredCompared} filtered states in the late stretch");
        Assert.True(smoothedShift > 1.5, $"smoothed track moved only {smoothedShift} m toward the late fixes");
    }
}
