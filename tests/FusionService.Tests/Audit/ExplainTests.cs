// GET /v1/vehicles/{vehicle}/explain: a gated jump moves nothing, a fused fix moves the estimate by less than its
// residual, and the replay from the store agrees with the estimation core run directly (issue 4).
using System.Globalization;
using System.Net;
using System.Text.Json;
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Audit;

[Collection(ServiceTests.Name)]
public sealed class ExplainTests(ServiceFixture fixture)
{
    /// <param name="fleetStart">
    /// Whether the fleet's receivers have fitted a pair before the vehicle is new (issue 12): its track then starts from
    /// their median, and the replay from the first stored measurement must start there too, as the core run directly does.
    /// </param>
    [Theory]
    [InlineData(false)]
    [InlineData(true)]
    public async Task Issue4_a_gated_jump_moves_nothing_and_fused_fixes_match_the_core(bool fleetStart)
    {
        var fleet = await fixture.NewFleetAsync();
        TrackState start = TrackState.Empty;
        if (fleetStart)
        {
            var fits = new FusionService.Storage.Vehicles.ReceiverFitRepository(fixture.Store);
            await fits.UpsertAsync(fleet.Id, "van-a", 0.93, 110.0, 400);
            await fits.UpsertAsync(fleet.Id, "van-b", 0.93, 110.0, 400);
            await fits.UpsertAsync(fleet.Id, "van-c", 0.93, 110.0, 400);
            start = TrackState.StartingFrom(0.93, 110.0);
        }

        const string vehicle = "van-explain";
        var drive = TelemetryDrive.Create(vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(7)), seed: 31);
        var messages = drive.Messages.Select(m => (Message: (JsonObject)m.Message.DeepClone(), m.Core)).ToList();
        long t0 = messages[0].Core[0].TimeUs;
        int j = messages.FindIndex(m => m.Core[0].Kind == SensorKind.GnssPosition && m.Core[0].TimeUs >= t0 + 45_000_000);
        {
            var (message, core) = messages[j];
            double lat = core[0].Value0 + 0.001;
            message["lat_deg"] = lat;
            core[0] = Measurement.GnssPosition(core[0].TimeUs, core[0].MessageKey, lat, core[0].Value1, core[0].Value2);
        }

        long jumpUs = messages[j].Core[0].TimeUs;
        await ScenarioTelemetry.IngestAsync(fixture, fixture.Client(fleet.IngestKey), messages.Select(m => m.Message));

        // A stored checkpoint (the track's base, about 60 s behind its newest data) lies before the jump's window but after
        // the early window: one explanation replays from it, the other from the first stored measurement.
        var grains = fixture.Host.Services.GetRequiredService<IGrainFactory>();
        await grains.GetGrain<FusionService.Tracking.IVehicleTrackGrain>(FusionService.Tracking.GrainKeys.Of(fleet.Id, vehicle)).PersistCheckpointAsync();

        // The reference: the core fed the same measurements, recording every outcome and the state at each time.
        var oracle = new Recorder();
        var track = new VehicleTrack(new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan), start);
        foreach (var c in messages.SelectMany(m => m.Core))
        {
            track.Process(c, oracle);
        }

        using var read = fixture.Client(fleet.ReadKey);
        foreach (var (timeUs, fromCheckpoint) in new[] { (jumpUs, true), (t0 + 8_000_000, false) })
        {
            var body = await DiagnosticsTests.GetOkAsync(read, $"/v1/vehicles/{vehicle}/explain?time={ScenarioTelemetry.Rfc3339(timeUs)}&window_s=10");
            Assert.True(body.GetProperty("replay").GetProperty("exact").GetBoolean());
            Assert.Equal(fromCheckpoint, body.GetProperty("replay").GetProperty("from_checkpoint").GetBoolean());
            var entries = body.GetProperty("measurements").EnumerateArray().ToList();
            var expected = oracle.Outcomes.Where(o => o.M.TimeUs >= timeUs - 5_000_000 && o.M.TimeUs <= timeUs + 5_000_000).ToList();
            Assert.Equal(expected.Count, entries.Count);
            double sum = 0, expectedSum = 0;
            for (int i = 0; i < entries.Count; i++)
            {
                var (m, outcome) = expected[i];
                var e = entries[i];
                Assert.Equal(m.TimeUs, DiagnosticsTests.ToUs(e.GetProperty("time")));
                Assert.Equal(SensorNames.Of(m.Kind), e.GetProperty("sensor").GetString());
                Assert.Equal(FusionService.Audit.DecisionNames.Of(outcome.Kind), e.GetProperty("decision").GetString());
                if (outcome.Kind is OutcomeKind.Accepted or OutcomeKind.Gated)
                {
                    double shift = e.GetProperty("position_shift_m").GetDouble();
                    AssertNear.Equal(outcome.PositionShiftM, shift, 1e-9, "position shift (m)");
                    sum += shift;
                    expectedSum += outcome.PositionShiftM;
                    AssertNear.Equal(outcome.Nis, e.GetProperty("nis").GetDouble(), 1e-9 * Math.Max(1, outcome.Nis), "NIS");
                    Assert.Equal(outcome.Dimension, e.GetProperty("nis_dof").GetInt32());
                    var residual = e.GetProperty("residual").EnumerateArray().Select(r => r.GetDouble()).ToList();
                    Assert.Equal(outcome.Dimension, residual.Count);
                    if (m.Kind == SensorKind.GnssPosition)
                    {
                        AssertNear.Equal(outcome.Innovation0, residual[0], 1e-6, "residual east (m)");
                        AssertNear.Equal(outcome.Innovation1, residual[1], 1e-6, "residual north (m)");
                        AssertNear.AtMost(Math.Sqrt((residual[0] * residual[0]) + (residual[1] * residual[1])), shift, 1e-9, "shift of a fix within its residual (m)");
                    }
                }
            }

            AssertNear.Equal(expectedSum, sum, 1e-6, "sum of position shifts in the window (m)");
            var state = body.GetProperty("state");
            var reference = oracle.StateAt(timeUs);
            var position = TrackProcessor.PositionOf(reference);
            Assert.Equal(reference.TimeUs, DiagnosticsTests.ToUs(state.GetProperty("time")));
            AssertNear.Equal(position.LatitudeDeg, state.GetProperty("lat_deg").GetDouble(), 1e-9, "latitude (deg)");
            AssertNear.Equal(position.LongitudeDeg, state.GetProperty("lon_deg").GetDouble(), 1e-9, "longitude (deg)");
            Assert.True(state.GetProperty("ellipse95").GetProperty("semi_major_m").GetDouble() > 0);
        }

        var explained = await DiagnosticsTests.GetOkAsync(read, $"/v1/vehicles/{vehicle}/explain?time={jumpUs / 1000}");
        var jump = explained.GetProperty("measurements").EnumerateArray()
            .Single(e => e.GetProperty("sensor").GetString() == "gnss_position" && DiagnosticsTests.ToUs(e.GetProperty("time")) == jumpUs);
        Assert.Equal("gated", jump.GetProperty("decision").GetString());
        Assert.Equal(0.0, jump.GetProperty("position_shift_m").GetDouble());

        // Gate for 2 degrees of freedom at probability 0.9997: -2 ln(1 - 0.9997) = 16.2236 (closed form of the chi-square
        // quantile for 2 dof, ../shared/check-values.md §1; derived).
        AssertNear.Equal(-2 * Math.Log(1 - 0.9997), jump.GetProperty("gate_threshold").GetDouble(), 1e-9, "gate threshold, 2 dof");
        Assert.True(jump.GetProperty("nis").GetDouble() > jump.GetProperty("gate_threshold").GetDouble());
        var jumpResidual = jump.GetProperty("residual").EnumerateArray().Select(r => r.GetDouble()).ToArray();
        Assert.True(jumpResidual[1] > 80, $"the 0.001 deg jump north shows as a {jumpResidual[1]} m north residual");
        Assert.Equal(["m", "m"], jump.GetProperty("residual_units").EnumerateArray().Select(u => u.GetString()));
        var fused = explained.GetProperty("measurements").EnumerateArray()
            .First(e => e.GetProperty("sensor").GetString() == "gnss_position" && e.GetProperty("decision").GetString() == "accepted");
        Assert.True(fused.GetProperty("position_shift_m").GetDouble() > 0);
    }

    [Fact]
    public async Task Issue4_explain_limits_fleets_and_roles()
    {
        var a = await fixture.NewFleetAsync();
        var b = await fixture.NewFleetAsync();
        string t = DateTimeOffset.UtcNow.AddSeconds(-5).ToString("O", CultureInfo.InvariantCulture);
        await fixture.Client(a.IngestKey).IngestOkAsync($$"""[{"vehicle":"van-x","kind":"wheel","time":"{{t}}","speed_mps":3}]""");
        long now = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds();
        string url = $"/v1/vehicles/van-x/explain?time={now}";
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(a.ReadKey).GetAsync(url)).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(a.AdminKey).GetAsync(url)).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await fixture.Client(b.ReadKey).GetAsync(url)).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(a.IngestKey).GetAsync(url)).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Client(null).GetAsync(url)).StatusCode);
        using var read = fixture.Client(a.ReadKey);
        foreach (var (q, parameter) in new[] { ("&window_s=301", "window_s"), ("&window_s=-2", "window_s"), ("&window_s=abc", "window_s") })
        {
            var response = await read.GetAsync(url + q);
            Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
            Assert.StartsWith(parameter + ":", (await response.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
        }

        var missing = await read.GetAsync("/v1/vehicles/van-x/explain");
        Assert.Equal(HttpStatusCode.BadRequest, missing.StatusCode);
        Assert.StartsWith("time:", (await missing.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    private sealed class Recorder : ITrackObserver
    {
        private readonly List<TrackState> _states = [];

        public List<(Measurement M, MeasurementOutcome Outcome)> Outcomes { get; } = [];

        public void OnOutcome(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay)
        {
            Assert.False(isReplay);
            Outcomes.Add((m, outcome));
            if (posterior.Phase == TrackPhase.Running)
            {
                _states.Add(posterior);
            }
        }

        public TrackState StateAt(long timeUs) => _states.Last(s => s.TimeUs <= timeUs);
    }
}
