// A smoothed track replayed in stretches from the checkpoints the track stored equals the smoother over the whole window.
using System.Globalization;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Ingest;
using FusionService.Operations;
using FusionService.Tests.Infrastructure;
using Xunit.Abstractions;

namespace FusionService.Tests.History;

/// <summary>
/// The smoothed-track request splits its replay at the filter checkpoints the track stored inside the window and runs
/// the stretches side by side; the reference is the full-step extended RTS smoother (Rauch, Tung and Striebel 1965) run
/// here in one go over every measurement sent. Both are the same estimate, so they agree to round-off (1e-9 degrees is
/// about 0.1 mm). Data: the invented delivery round of <see cref="HistoryDrive"/>; checkpoints every 30 s of data.
/// </summary>
[Collection(ServiceTests.Name)]
public sealed class ReplayStretchTests(ServiceFixture fixture, ITestOutputHelper output)
{
    private const int Stretches = 4;

    [Fact]
    public async Task Issue4_a_window_replayed_in_stretches_from_stored_checkpoints_equals_the_smoother_in_one_go()
    {
        await AssertStretchesEqualOneGoAsync("van-stretches");
    }

    [Fact]
    public async Task Issue14_a_replay_under_a_processor_cap_gives_the_same_track()
    {
        // A cap of 0.02 cores (HeavyReads:ReplayCpuCores) makes the replay threads sleep while ingest commits (kept
        // committing here through the read); the result must not change.
        await AssertStretchesEqualOneGoAsync("van-stretches-capped", keepIngestActive: true, ("HeavyReads:ReplayCpuCores", "0.02"));
    }

    private Task AssertStretchesEqualOneGoAsync(string vehicle) => AssertStretchesEqualOneGoAsync(vehicle, keepIngestActive: false);

    private async Task AssertStretchesEqualOneGoAsync(string vehicle, bool keepIngestActive, params (string Key, string Value)[] settings)
    {
        await using var host = NewHost(settings);
        var fleet = await fixture.NewFleetAsync();
        var drive = HistoryDrive.Create(vehicle, seed: 6400);
        await drive.IngestAsync(fixture, fleet, host: host);

        using var stop = new CancellationTokenSource();
        var ingest = host.Services.GetRequiredService<IngestActivity>();
        var committing = keepIngestActive
            ? Task.Run(async () =>
            {
                while (!stop.IsCancellationRequested)
                {
                    ingest.MarkCommitted();
                    await Task.Delay(100, CancellationToken.None);
                }
            })
            : Task.CompletedTask;
        var (stretches, misses, compared) = await CompareWithOneGoAsync(host, fleet, drive, vehicle, drive.Drive.Messages.SelectMany(m => m.Core));
        await stop.CancelAsync();
        await committing;
        Assert.Equal(Stretches, stretches);
        Assert.Equal(0, misses);
        Assert.True(compared > 100, $"only {compared} points compared");
    }

    [Fact]
    public async Task Issue4_a_fix_stored_too_late_before_a_checkpoint_makes_the_replay_go_on_from_where_it_ended()
    {
        await using var host = NewHost();
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-stretch-late";
        var drive = HistoryDrive.Create(Vehicle, seed: 6500);
        var messages = drive.Drive.Messages;

        // One GNSS message 60 s into the round is held back and sent after everything else: the live filter stores it as too
        // late, so the checkpoints after it do not include it, while the smoothed replay must.
        int late = Enumerable.Range(0, messages.Count).First(i =>
            messages[i].Core[0].Kind == SensorKind.GnssPosition && messages[i].Core[0].TimeUs >= drive.StartUs + 60_000_000);
        await drive.IngestAsync(fixture, fleet, i => i != late, host);
        await drive.IngestAsync(fixture, fleet, i => i == late, host);
        long tooLate = await fixture.CountAsync(
            $"SELECT count(*) FROM {JudgedSql.OfVehicle} WHERE outcome = 2", fleet.Id, Vehicle);
        Assert.Equal(messages[late].Core.Length, tooLate); // the fix and the speed and course sent with it

        var (stretches, misses, compared) = await CompareWithOneGoAsync(host, fleet, drive, Vehicle, messages.SelectMany(m => m.Core));
        Assert.Equal(Stretches, stretches);
        Assert.Equal(1, misses);
        Assert.True(compared > 100, $"only {compared} points compared");
    }

    private ServiceFactory NewHost(params (string Key, string Value)[] more)
    {
        var settings = new Dictionary<string, string?>
        {
            ["Tracks:HistoryCheckpointSpacingMin"] = "0.5",
            ["Tracks:ReplayStretches"] = Stretches.ToString(CultureInfo.InvariantCulture),
        };
        foreach (var (key, value) in more)
        {
            settings[key] = value;
        }

        return new(fixture.ConnectionString, settings);
    }

    /// <summary>
    /// Requests the smoothed track of the whole round and compares every point with the full-step smoother over
    /// <paramref name="sent"/>; returns the stretches the request was split into, its seam misses and the points compared.
    /// </summary>
    private async Task<(long Stretches, long Misses, int Compared)> CompareWithOneGoAsync(
        ServiceFactory host, TestFleet fleet, HistoryDrive drive, string vehicle, IEnumerable<Measurement> sent)
    {
        long checkpoints = await fixture.CountAsync(
            "SELECT count(*) FROM filter_checkpoints WHERE fleet_id = $1 AND vehicle_id = $2", fleet.Id, vehicle);
        var metrics = host.Services.GetRequiredService<ServiceMetrics>();
        long stretchesBefore = metrics.SmoothingStretches, missesBefore = metrics.SmoothingSeamMisses;
        using var read = fixture.Client(fleet.ReadKey, host);
        var points = (await HistoryDrive.TrackJsonAsync(read, vehicle, drive.StartUs, drive.EndUs + 1_000_000, "smoothed")).GetProperty("points").EnumerateArray().ToList();
        long stretches = metrics.SmoothingStretches - stretchesBefore, misses = metrics.SmoothingSeamMisses - missesBefore;

        var all = sent.ToList();
        all.Sort((a, b) => VehicleTrack.CompareKey(a, b));
        ReplayResult reference = TrackReplay.Run(new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan), TrackState.Empty, all);
        var expected = new Dictionary<long, (double LatDeg, double LonDeg)>();
        foreach (SmoothedSegment s in reference.Smoothed)
        {
            for (int k = 0; k < s.Count; k++)
            {
                expected[s.TimesUs[k]] = TrackPointSourcesProbe.Position(s, k); // the last step of a time wins
            }
        }

        int compared = 0;
        double worstDeg = 0;
        foreach (var p in points)
        {
            long t = TrackHistoryTests.TimeUs(p.GetProperty("time").GetString()!);
            var e = expected[t];
            double lat = p.GetProperty("lat_deg").GetDouble(), lon = p.GetProperty("lon_deg").GetDouble();
            AssertNear.Equal(e.LatDeg, lat, 1e-9, $"smoothed latitude at {t} us against the smoother in one go (deg)");
            AssertNear.Equal(e.LonDeg, lon, 1e-9, $"smoothed longitude at {t} us against the smoother in one go (deg)");
            worstDeg = Math.Max(worstDeg, Math.Max(Math.Abs(e.LatDeg - lat), Math.Abs(e.LonDeg - lon)));
            compared++;
        }

        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"{checkpoints} checkpoints stored; the request replayed {stretches} stretches ({misses} replayed again); "
            + $"{compared} points equal the full-step smoother within {worstDeg:E1} degrees"));
        return (stretches, misses, compared);
    }
}
