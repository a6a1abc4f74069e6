// GET /v1/vehicles/{vehicle}/diagnostics on a crafted stream with known numbers of gated, duplicate and too-late
// measurements, a GNSS outage, latency percentiles and calibration (issue 4).
using System.Globalization;
using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Tests.Infrastructure;
using MathNet.Numerics.Statistics;

namespace FusionService.Tests.Audit;

[Collection(ServiceTests.Name)]
public sealed class DiagnosticsTests(ServiceFixture fixture)
{
    private static readonly string[] Sensors = ["gnss_position", "gnss_velocity", "wheel", "imu"];

    [Fact]
    public async Task Issue4_counts_outage_latency_and_calibration_of_a_crafted_stream()
    {
        var fleet = await fixture.NewFleetAsync();
        const string vehicle = "van-diag";
        long startUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(9));
        var drive = TelemetryDrive.Create(vehicle, startUs, seed: 23);
        var messages = drive.Messages.Select(m => (Message: (JsonObject)m.Message.DeepClone(), m.Core)).ToList();
        long t0 = messages[0].Core[0].TimeUs;

        // Three GNSS jumps of 0.001 deg of latitude (about 111 m north), far outside any 3 m fix: gated by design.
        var jumpAtS = new[] { 30.0, 60.0, 75.0 };
        var jumped = new HashSet<int>();
        foreach (double s in jumpAtS)
        {
            int i = messages.FindIndex(m => m.Core[0].Kind == SensorKind.GnssPosition && m.Core[0].TimeUs >= t0 + (long)(s * 1e6));
            var (message, core) = messages[i];
            double lat = core[0].Value0 + 0.001;
            message["lat_deg"] = lat;
            core[0] = Measurement.GnssPosition(core[0].TimeUs, core[0].MessageKey, lat, core[0].Value1, core[0].Value2);
            jumped.Add(i);
        }

        // A GNSS outage: every fix strictly between 40 s and 48 s is left out while the van drives on wheel and IMU.
        messages.RemoveAll(m => m.Core[0].Kind == SensorKind.GnssPosition && m.Core[0].TimeUs > t0 + 40_000_000 && m.Core[0].TimeUs < t0 + 48_000_000);
        var fixTimes = messages.Where(m => m.Core[0].Kind == SensorKind.GnssPosition).Select(m => m.Core[0].TimeUs).ToList();
        var gaps = fixTimes.Zip(fixTimes.Skip(1)).Where(p => p.Second - p.First > 5_000_000).ToList();
        Assert.Single(gaps);

        using var ingest = fixture.Client(fleet.IngestKey);
        await ScenarioTelemetry.IngestAsync(fixture, ingest, messages.Select(m => m.Message));

        // Duplicates: 12 messages of the drive sent again, and one of them twice more within one request.
        var again = messages.Where((_, i) => i % 150 == 7).Take(12).ToList();
        var resend = again.Select(m => m.Message).Append(again[0].Message).Append(again[0].Message);
        await ScenarioTelemetry.IngestAsync(fixture, ingest, resend);
        var expectedDuplicates = new long[4];
        foreach (var m in again.Append(again[0]).Append(again[0]))
        {
            foreach (var c in m.Core)
            {
                expectedDuplicates[(int)c.Kind]++;
            }
        }

        // Too late: 4 new wheel samples timed 2 s after the start arrive after the newest data is 60 s further on.
        var late = Enumerable.Range(0, 4).Select(k =>
        {
            long t = t0 + 2_050_000 + (k * 20_000);
            string id = "late-" + k.ToString(CultureInfo.InvariantCulture);
            return (Message: new JsonObject { ["vehicle"] = vehicle, ["kind"] = "wheel", ["time"] = ScenarioTelemetry.Rfc3339(t), ["id"] = id, ["speed_mps"] = 5.0 },
                Core: new[] { Measurement.WheelSpeed(t, FusionService.Ingest.MessageKeys.FromId(id), 5.0) });
        }).ToList();
        await ScenarioTelemetry.IngestAsync(fixture, ingest, late.Select(l => l.Message));

        // The reference: the estimation core fed the same measurements in the same order.
        var track = new VehicleTrack(new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan));
        var accepted = new long[4];
        var gated = new long[4];
        var tooLate = new long[4];
        foreach (var core in messages.Select(m => m.Core).Concat(late.Select(l => l.Core)))
        {
            foreach (var c in core)
            {
                var outcome = track.Process(c);
                int k = (int)c.Kind;
                accepted[k] += outcome.Kind is OutcomeKind.Accepted or OutcomeKind.TrackReset ? 1 : 0;
                gated[k] += outcome.Kind == OutcomeKind.Gated ? 1 : 0;
                tooLate[k] += outcome.Kind == OutcomeKind.TooLate ? 1 : 0;
            }
        }

        Assert.Equal(jumpAtS.Length, gated[0]);
        Assert.Equal(4, tooLate[2]);

        using var read = fixture.Client(fleet.ReadKey);
        string from = ScenarioTelemetry.Rfc3339(t0 - 1_000_000);
        string to = ((t0 + 300_000_000) / 1000).ToString(CultureInfo.InvariantCulture);
        var body = await GetOkAsync(read, $"/v1/vehicles/{vehicle}/diagnostics?from={from}&to={to}");
        Assert.Equal(vehicle, body.GetProperty("vehicle").GetString());
        var sensors = body.GetProperty("sensors").EnumerateArray().ToList();
        Assert.Equal(Sensors, sensors.Select(s => s.GetProperty("sensor").GetString()));
        for (int k = 0; k < 4; k++)
        {
            var s = sensors[k];
            Assert.Equal(accepted[k], s.GetProperty("accepted").GetInt64());
            Assert.Equal(gated[k], s.GetProperty("gated").GetInt64());
            Assert.Equal(expectedDuplicates[k], s.GetProperty("duplicate").GetInt64());
            Assert.Equal(tooLate[k], s.GetProperty("too_late").GetInt64());
        }

        Assert.Equal(3, sensors[0].GetProperty("gated").GetInt64());
        Assert.Equal(4, sensors[2].GetProperty("too_late").GetInt64());

        // The outage: between the two fixes around the dropped ones.
        var outage = Assert.Single(body.GetProperty("gnss_outages").EnumerateArray());
        Assert.Equal(gaps[0].First, ToUs(outage.GetProperty("from")));
        Assert.Equal(gaps[0].Second, ToUs(outage.GetProperty("to")));
        AssertNear.Equal((gaps[0].Second - gaps[0].First) / 1e6, outage.GetProperty("duration_s").GetDouble(), 1e-9, "outage duration (s)");
        Assert.Empty(body.GetProperty("track_resets").EnumerateArray());

        // Latency percentiles against MathNet's quantile of definition R7 (Hyndman and Fan 1996, type 7), a general-purpose
        // reference library, over the latencies read back from the store.
        for (short kind = 0; kind < 4; kind++)
        {
            var latencies = await LatenciesAsync(fleet.Id, vehicle, kind);
            var l = sensors[kind].GetProperty("latency_ms");
            AssertNear.Equal(Statistics.QuantileCustom(latencies, 0.50, QuantileDefinition.R7), l.GetProperty("p50").GetDouble(), 1e-6, "latency p50 (ms)");
            AssertNear.Equal(Statistics.QuantileCustom(latencies, 0.95, QuantileDefinition.R7), l.GetProperty("p95").GetDouble(), 1e-6, "latency p95 (ms)");
            AssertNear.Equal(Statistics.QuantileCustom(latencies, 0.99, QuantileDefinition.R7), l.GetProperty("p99").GetDouble(), 1e-6, "latency p99 (ms)");
        }

        // Calibration: the newest fused state's values; standard deviations from the packed covariance (1-based SQL
        // elements 34 and 36 are (6,6) and (7,7) of the row-major upper triangle).
        var calibration = body.GetProperty("calibration");
        await using (var connection = await fixture.Store.OpenConnectionAsync())
        await using (var command = new Npgsql.NpgsqlCommand(
            "SELECT wheel_scale, sqrt(covariance[36]), gyro_bias_rps, sqrt(covariance[34]) FROM fused_states WHERE fleet_id = $1 AND vehicle_id = $2 ORDER BY time_us DESC LIMIT 1", connection))
        {
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = fleet.Id });
            command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = vehicle });
            await using var reader = await command.ExecuteReaderAsync();
            Assert.True(await reader.ReadAsync());
            AssertNear.Equal(reader.GetDouble(0), calibration.GetProperty("wheel_scale").GetDouble(), 1e-12, "wheel scale");
            AssertNear.Equal(reader.GetDouble(1), calibration.GetProperty("wheel_scale_sd").GetDouble(), 1e-12, "wheel scale sd");
            AssertNear.Equal(reader.GetDouble(2) * 180 / Math.PI, calibration.GetProperty("gyro_bias_dps").GetDouble(), 1e-9, "gyro bias (deg/s)");
            AssertNear.Equal(reader.GetDouble(3) * 180 / Math.PI, calibration.GetProperty("gyro_bias_sd_dps").GetDouble(), 1e-9, "gyro bias sd (deg/s)");
        }

        Assert.True(calibration.GetProperty("wheel_scale_sd").GetDouble() > 0);
    }

    [Fact]
    public async Task Issue4_other_fleets_get_404_and_roles_are_enforced_and_bad_parameters_named()
    {
        var a = await fixture.NewFleetAsync();
        var b = await fixture.NewFleetAsync();
        string t = DateTimeOffset.UtcNow.AddSeconds(-5).ToString("O", CultureInfo.InvariantCulture);
        await fixture.Client(a.IngestKey).IngestOkAsync($$"""[{"vehicle":"van-a","kind":"wheel","time":"{{t}}","speed_mps":3}]""");
        long now = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds();
        string query = $"?from={now - 3_600_000}&to={now}";
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(a.ReadKey).GetAsync("/v1/vehicles/van-a/diagnostics" + query)).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(a.AdminKey).GetAsync("/v1/vehicles/van-a/diagnostics" + query)).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await fixture.Client(b.ReadKey).GetAsync("/v1/vehicles/van-a/diagnostics" + query)).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await fixture.Client(a.ReadKey).GetAsync("/v1/vehicles/van-none/diagnostics" + query)).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(a.IngestKey).GetAsync("/v1/vehicles/van-a/diagnostics" + query)).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Client(null).GetAsync("/v1/vehicles/van-a/diagnostics" + query)).StatusCode);

        using var read = fixture.Client(a.ReadKey);
        foreach (var (q, parameter) in new[]
        {
            ($"?to={now}", "from"),
            ($"?from=yesterday&to={now}", "from"),
            ($"?from={now}&to={now - 1000}", "to"),
            ($"?from={now - (25L * 3_600_000)}&to={now}", "to"),
        })
        {
            var response = await read.GetAsync("/v1/vehicles/van-a/diagnostics" + q);
            Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
            var problem = await response.ProblemAsync();
            Assert.StartsWith(parameter + ":", problem.GetProperty("detail").GetString(), StringComparison.Ordinal);
        }
    }

    internal static async Task<JsonElement> GetOkAsync(HttpClient client, string url)
    {
        using var response = await client.GetAsync(url);
        string text = await response.Content.ReadAsStringAsync();
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode}: {text}");
        return JsonDocument.Parse(text).RootElement.Clone();
    }

    internal static long ToUs(JsonElement time) => (DateTimeOffset.Parse(time.GetString()!, CultureInfo.InvariantCulture).UtcTicks - DateTime.UnixEpoch.Ticks) / 10;

    private async Task<double[]> LatenciesAsync(Guid fleetId, string vehicle, short kind)
    {
        var values = new List<double>();
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new Npgsql.NpgsqlCommand(
            "SELECT (extract(epoch FROM received_at - measured_at) * 1000)::double precision FROM measurements WHERE fleet_id = $1 AND vehicle_id = $2 AND kind = $3", connection);
        command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = fleetId });
        command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = vehicle });
        command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = kind });
        await using var reader = await command.ExecuteReaderAsync();
        while (await reader.ReadAsync())
        {
            values.Add(reader.GetDouble(0));
        }

        Assert.NotEmpty(values);
        return [.. values];
    }
}
