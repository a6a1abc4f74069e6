// A bad optional field is left out and named in the answer; the valid position is always kept. Accuracies are bounded.
using System.Globalization;
using System.Net;
using System.Net.WebSockets;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Ingest;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class OptionalFieldTests(ServiceFixture fixture)
{
    private static string Now(double offsetS = 0) =>
        DateTimeOffset.UtcNow.AddSeconds(offsetS).ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture);

    private static string Gnss(string extra) =>
        "[{\"vehicle\":\"v1\",\"kind\":\"gnss\",\"time\":\"" + Now(-2) + "\",\"lat_deg\":45,\"lon_deg\":7,\"accuracy_m\":3" + extra + "}]";

    [Fact]
    public async Task Issue12_course_360_is_stored_as_course_0()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        var result = await client.IngestOkAsync(Gnss(",\"speed_mps\":6.5,\"course_deg\":360.0"));
        var message = Assert.Single(result.Results);
        Assert.Equal("accepted", message.Status);
        Assert.Null(message.DroppedFields);
        var (speed, course) = await VelocityAsync(fleet.Id);
        AssertNear.Equal(6.5, speed, 1e-9, "speed (m/s)");
        Assert.Equal(0.0, course);
    }

    public static TheoryData<string> BadCourses => new() { "360.5", "-0.1", "\"north\"", "true" };

    [Theory]
    [MemberData(nameof(BadCourses))]
    public async Task Issue12_a_bad_course_keeps_the_position_and_the_speed_and_the_answer_names_it(string course)
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        var result = await client.IngestOkAsync(Gnss(",\"speed_mps\":6.5,\"course_deg\":" + course));
        Assert.Equal((1, 0, 0), (result.Accepted, result.Duplicate, result.Rejected));
        var dropped = Assert.Single(Assert.Single(result.Results).DroppedFields!);
        Assert.Equal("course_deg", dropped.Field);
        Assert.False(string.IsNullOrEmpty(dropped.Reason));
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1 AND kind = 0", fleet.Id));
        var (speed, storedCourse) = await VelocityAsync(fleet.Id);
        AssertNear.Equal(6.5, speed, 1e-9, "speed (m/s)");
        Assert.Null(storedCourse);
    }

    public static TheoryData<string, string> BadSpeedAccuracies => new()
    {
        { "-1", "[0.01, 50] m/s" },
        { "0", "[0.01, 50] m/s" },
        { "1e-320", "[0.01, 50] m/s" },
        { "1e308", "[0.01, 50] m/s" },
        { "\"fast\"", "finite number" },
    };

    [Theory]
    [MemberData(nameof(BadSpeedAccuracies))]
    public async Task Issue12_a_bad_speed_accuracy_keeps_the_position_without_the_velocity(string speedAccuracy, string reason)
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        var result = await client.IngestOkAsync(Gnss(",\"speed_mps\":6.5,\"course_deg\":90,\"speed_accuracy_mps\":" + speedAccuracy));
        var message = Assert.Single(result.Results);
        Assert.Equal("accepted", message.Status);
        Assert.Equal(["speed_accuracy_mps", "speed_mps", "course_deg"], message.DroppedFields!.Select(d => d.Field));
        Assert.Contains(reason, message.DroppedFields![0].Reason, StringComparison.Ordinal);
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1 AND kind = 0", fleet.Id));
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1 AND kind = 1", fleet.Id));
    }

    [Theory]
    [InlineData("-3")]
    [InlineData("151")]
    [InlineData("\"7\"")]
    public async Task Issue12_a_bad_gnss_speed_keeps_the_position(string speed)
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        var result = await client.IngestOkAsync(Gnss(",\"speed_mps\":" + speed + ",\"course_deg\":90"));
        var message = Assert.Single(result.Results);
        Assert.Equal("accepted", message.Status);
        Assert.Equal(["speed_mps", "course_deg"], message.DroppedFields!.Select(d => d.Field));
        Assert.Equal(1, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public async Task Issue12_ndjson_and_websocket_answers_name_the_dropped_field()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string t = Now(-3);
        string wheel = $$"""{"vehicle":"v1","kind":"wheel","time":"{{t}}","speed_mps":2}""";
        string gnss = $$"""{"vehicle":"v1","kind":"gnss","time":"{{t}}","lat_deg":45,"lon_deg":7,"accuracy_m":3,"speed_mps":2,"course_deg":720}""";
        using var response = await client.PostAsync("/v1/telemetry", new StringContent(wheel + "\n" + gnss + "\n", Encoding.UTF8, "application/x-ndjson"));
        string text = await response.Content.ReadAsStringAsync();
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        var results = JsonDocument.Parse(text).RootElement.GetProperty("results");
        Assert.False(results[0].TryGetProperty("dropped_fields", out _), "a message without dropped fields has no list: " + text);
        var dropped = Assert.Single(results[1].GetProperty("dropped_fields").EnumerateArray());
        Assert.Equal("course_deg", dropped.GetProperty("field").GetString());

        var ws = fixture.Host.Server.CreateWebSocketClient();
        ws.ConfigureRequest = request => request.Headers.Authorization = "Bearer " + fleet.IngestKey;
        using var socket = await ws.ConnectAsync(new Uri(fixture.Host.Server.BaseAddress, "/v1/telemetry/stream"), CancellationToken.None);
        string later = Now(-1);
        string frame = "{\"seq\":4,\"messages\":[" + wheel.Replace(t, later, StringComparison.Ordinal) + ","
            + gnss.Replace(t, later, StringComparison.Ordinal).Replace("720", "-5", StringComparison.Ordinal) + "]}";
        await socket.SendAsync(Encoding.UTF8.GetBytes(frame), WebSocketMessageType.Text, true, CancellationToken.None);
        var buffer = new byte[1 << 16];
        var received = await socket.ReceiveAsync(buffer, CancellationToken.None);
        var ack = JsonDocument.Parse(buffer.AsMemory(0, received.Count)).RootElement;
        Assert.Equal(2, ack.GetProperty("accepted").GetInt32());
        Assert.Equal(0, ack.GetProperty("rejected").GetArrayLength());
        var wsDropped = Assert.Single(ack.GetProperty("dropped_fields").EnumerateArray());
        Assert.Equal(1, wsDropped.GetProperty("index").GetInt32());
        Assert.Equal("course_deg", wsDropped.GetProperty("field").GetString());
        await socket.CloseAsync(WebSocketCloseStatus.NormalClosure, "done", CancellationToken.None);
    }

    [Theory]
    [InlineData(",\"accuracy_m\":1e50", "accuracy_m")]
    [InlineData(",\"accuracy_m\":10000.5", "accuracy_m")]
    [InlineData(",\"hdop\":1e50", "hdop")]
    public async Task Issue13_an_absurd_position_accuracy_is_rejected_naming_the_field(string accuracy, string field)
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string body = "[{\"vehicle\":\"v1\",\"kind\":\"gnss\",\"time\":\"" + Now(-2) + "\",\"lat_deg\":45,\"lon_deg\":7" + accuracy + "}]";
        using var response = await client.PostJsonAsync(body);
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var problem = await response.ProblemAsync();
        Assert.StartsWith("messages[0]." + field + ": must be", problem.GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(field, Assert.Single(problem.GetProperty("errors").EnumerateArray()).GetProperty("field").GetString());
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public async Task Issue13_a_fix_with_speed_accuracy_1e308_does_not_break_the_vehicle()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-poison";
        var drive = TelemetryDrive.Create(Vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(5)), seed: 113);
        int half = drive.Messages.Count / 2;
        var (fix, fixCore) = drive.Messages.Skip(half).First(m => m.Core.Length == 2);
        long poisonUs = fixCore[0].TimeUs + 1000;
        var poison = (JsonObject)fix.DeepClone();
        poison["id"] = "poison";
        poison["time"] = DateTimeOffset.UnixEpoch.AddTicks(poisonUs * 10).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", CultureInfo.InvariantCulture);
        poison["speed_accuracy_mps"] = 1e308;
        using var client = fixture.Client(fleet.IngestKey);

        for (int from = 0; from < half; from += 200)
        {
            await client.IngestOkAsync(drive.Body(from, Math.Min(from + 200, half)));
        }

        var answer = await client.IngestOkAsync(new JsonArray(poison).ToJsonString());
        Assert.Equal(1, answer.Accepted);
        Assert.Contains(answer.Results[0].DroppedFields!, d => d.Field == "speed_accuracy_mps");
        for (int from = half; from < drive.Messages.Count; from += 200)
        {
            await client.IngestOkAsync(drive.Body(from, Math.Min(from + 200, drive.Messages.Count)));
        }

        // The poison's position is valid and fused; its velocity never reaches the track.
        var oracle = new TrackOracle();
        var position = fixCore[0];
        oracle.Process(drive.Messages.Select(m => m.Core)
            .Append([Measurement.GnssPosition(poisonUs, MessageKeys.FromId("poison"), position.Value0, position.Value1, position.Value2)]));
        var state = await fixture.Client(fleet.ReadKey).StateAsync(Vehicle);
        Assert.Equal(drive.Messages.Max(m => m.Core.Max(c => c.TimeUs)), (state.Time.UtcTicks - DateTimeOffset.UnixEpoch.UtcTicks) / 10);
        Assert.Equal(oracle.Response(Vehicle), state);
    }

    private async Task<(double Speed, double? Course)> VelocityAsync(Guid fleetId)
    {
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new Npgsql.NpgsqlCommand("SELECT v0, v1 FROM measurements WHERE fleet_id = $1 AND kind = 1", connection);
        command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = fleetId });
        await using var reader = await command.ExecuteReaderAsync();
        Assert.True(await reader.ReadAsync(), "a velocity measurement is stored");
        var result = (reader.GetDouble(0), reader.IsDBNull(1) ? (double?)null : reader.GetDouble(1));
        Assert.False(await reader.ReadAsync(), "one velocity measurement");
        return result;
    }
}
