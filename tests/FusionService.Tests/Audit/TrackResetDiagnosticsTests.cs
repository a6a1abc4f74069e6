// Track resets in the diagnostics and the explanation: a van whose fixes all move 330 m away (towed, ferried) is
// re-initialised by the track, and both endpoints name the fix that did it (issue 4).
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Audit;

[Collection(ServiceTests.Name)]
public sealed class TrackResetDiagnosticsTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Issue4_a_sustained_relocation_is_listed_as_a_track_reset()
    {
        var fleet = await fixture.NewFleetAsync();
        const string vehicle = "van-reset";
        var drive = TelemetryDrive.Create(vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(8)), seed: 47);
        var messages = drive.Messages.Select(m => (Message: (JsonObject)m.Message.DeepClone(), m.Core)).ToList();
        long t0 = messages[0].Core[0].TimeUs;
        // From 25 s on every fix lies 333 m north, for the rest of the drive: longer than TrackOptions.ResetAfterS (45 s).
        foreach (var (message, core) in messages.Where(m => m.Core[0].Kind == SensorKind.GnssPosition && m.Core[0].TimeUs >= t0 + 25_000_000))
        {
            double lat = core[0].Value0 + 0.003;
            message["lat_deg"] = lat;
            core[0] = Measurement.GnssPosition(core[0].TimeUs, core[0].MessageKey, lat, core[0].Value1, core[0].Value2);
        }

        await ScenarioTelemetry.IngestAsync(fixture, fixture.Client(fleet.IngestKey), messages.Select(m => m.Message));
        var track = new VehicleTrack(new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan));
        var resets = new List<long>();
        foreach (var c in messages.SelectMany(m => m.Core))
        {
            if (track.Process(c).Kind == OutcomeKind.TrackReset)
            {
                resets.Add(c.TimeUs);
            }
        }

        Assert.NotEmpty(resets);
        using var read = fixture.Client(fleet.ReadKey);
        var body = await DiagnosticsTests.GetOkAsync(read, $"/v1/vehicles/{vehicle}/diagnostics?from={(t0 / 1000) - 1000}&to={(t0 / 1000) + 200_000}");
        Assert.Equal(resets, body.GetProperty("track_resets").EnumerateArray().Select(r => DiagnosticsTests.ToUs(r.GetProperty("time"))));

        var explained = await DiagnosticsTests.GetOkAsync(read, $"/v1/vehicles/{vehicle}/explain?time={resets[0] / 1000}&window_s=4");
        var reset = explained.GetProperty("measurements").EnumerateArray()
            .Single(e => e.GetProperty("sensor").GetString() == "gnss_position" && DiagnosticsTests.ToUs(e.GetProperty("time")) == resets[0]);
        Assert.Equal("track_reset", reset.GetProperty("decision").GetString());
        Assert.True(reset.GetProperty("position_shift_m").GetDouble() >= new TrackOptions().ResetDistanceM);
    }
}
