// Every validation rule answers with its 4xx and a problem document naming the field and the reason.
using System.Globalization;
using System.Net;
using System.Text;
using System.Text.Json;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class ValidationTests(ServiceFixture fixture)
{
    private static string Now(double offsetS = 0) =>
        DateTimeOffset.UtcNow.AddSeconds(offsetS).ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture);

    public static TheoryData<string, string, string> BadMessages => new()
    {
        // message JSON, field, fragment of the reason
        { """{"vehicle":"v","kind":"radar","time":"NOW","speed_mps":1}""", "kind", "unknown kind 'radar'" },
        { """{"vehicle":"v","kind":"gnss","time":"NOW","lon_deg":7,"accuracy_m":3}""", "lat_deg", "is required" },
        { """{"vehicle":"v","kind":"gnss","time":"NOW","lat_deg":"45","lon_deg":7,"accuracy_m":3}""", "lat_deg", "finite number" },
        { """{"vehicle":"v","kind":"gnss","time":"NOW","lat_deg":1e999,"lon_deg":7,"accuracy_m":3}""", "lat_deg", "finite number" },
        { """{"vehicle":"v","kind":"gnss","time":"NOW","lat_deg":90.5,"lon_deg":7,"accuracy_m":3}""", "lat_deg", "[-90, 90]" },
        { """{"vehicle":"v","kind":"gnss","time":"NOW","lat_deg":45,"lon_deg":-180.01,"accuracy_m":3}""", "lon_deg", "[-180, 180]" },
        { """{"vehicle":"v","kind":"gnss","time":"NOW","lat_deg":45,"lon_deg":7}""", "accuracy_m", "is required (or give hdop)" },
        { """{"vehicle":"v","kind":"gnss","time":"NOW","lat_deg":45,"lon_deg":7,"accuracy_m":3,"accuracy_kind":"cep99"}""", "accuracy_kind", "one_sigma, cep50" },
        { """{"vehicle":"v","kind":"wheel","time":"NOW"}""", "speed_mps", "is required" },
        { """{"vehicle":"v","kind":"imu","time":"NOW","yaw_rate_dps":"NaN"}""", "yaw_rate_dps", "finite number" },
        { """{"vehicle":"v","kind":"wheel","time":"FUTURE","speed_mps":1}""", "time", "in the future; at most 60 s allowed" },
        { """{"vehicle":"v","kind":"wheel","time":"2001-01-01T00:00:00Z","speed_mps":1}""", "time", "older than the storage window" },
        { """{"vehicle":"v","kind":"wheel","time":"yesterday","speed_mps":1}""", "time", "RFC 3339" },
        { """{"kind":"wheel","time":"NOW","speed_mps":1}""", "vehicle", "is required" },
        { """{"vehicle":"a/b","kind":"wheel","time":"NOW","speed_mps":1}""", "vehicle", "A-Z a-z 0-9" },
    };

    [Theory]
    [MemberData(nameof(BadMessages))]
    public async Task A_request_of_one_bad_message_is_400_naming_field_and_reason(string message, string field, string reason)
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string body = "[" + message.Replace("\"NOW\"", "\"" + Now() + "\"", StringComparison.Ordinal)
            .Replace("\"FUTURE\"", "\"" + Now(3600) + "\"", StringComparison.Ordinal) + "]";
        using var response = await client.PostJsonAsync(body);
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var problem = await response.ProblemAsync();
        string detail = problem.GetProperty("detail").GetString()!;
        Assert.StartsWith("messages[0]." + field + ": ", detail, StringComparison.Ordinal);
        Assert.Contains(reason, detail, StringComparison.Ordinal);
        var error = Assert.Single(problem.GetProperty("errors").EnumerateArray());
        Assert.Equal(field, error.GetProperty("field").GetString());
        Assert.Equal(0, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public async Task Malformed_json_is_400_naming_the_body()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        using var response = await client.PostJsonAsync("""[{"vehicle":"v","kind":""");
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.StartsWith("body: not valid JSON", (await response.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_body_that_is_not_an_array_is_400()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        using var response = await client.PostJsonAsync("""{"vehicle":"v"}""");
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.Contains("JSON array", (await response.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task An_oversized_body_is_413()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string filler = new('x', ServiceFactory.MaxBodyBytes);
        using var response = await client.PostJsonAsync("""[{"vehicle":"v","kind":"wheel","time":0,"speed_mps":1,"pad":""" + "\"" + filler + "\"}]");
        Assert.Equal(HttpStatusCode.RequestEntityTooLarge, response.StatusCode);
        Assert.Contains("exceeds the limit", (await response.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Too_many_messages_is_413()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string one = """{"vehicle":"v","kind":"wheel","time":"NOW","speed_mps":1}""".Replace("NOW", Now(), StringComparison.Ordinal);
        string body = "[" + string.Join(",", Enumerable.Repeat(one, ServiceFactory.MaxMessages + 1)) + "]";
        using var response = await client.PostJsonAsync(body);
        Assert.Equal(HttpStatusCode.RequestEntityTooLarge, response.StatusCode);
        Assert.Contains("messages exceed the limit of " + ServiceFactory.MaxMessages.ToString(CultureInfo.InvariantCulture),
            (await response.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task One_bad_message_never_sinks_its_good_neighbours()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string t = Now(-5);
        string body = "[" + string.Join(",",
            $$"""{"vehicle":"v1","kind":"wheel","time":"{{t}}","speed_mps":2}""",
            $$"""{"vehicle":"v1","kind":"gnss","time":"{{t}}","lat_deg":95,"lon_deg":7,"accuracy_m":3}""",
            $$"""{"vehicle":"v1","kind":"imu","time":"{{t}}","yaw_rate_dps":1.5}""") + "]";
        var result = await client.IngestOkAsync(body);
        Assert.Equal((2, 0, 1), (result.Accepted, result.Duplicate, result.Rejected));
        Assert.Equal(["accepted", "rejected", "accepted"], result.Results.Select(r => r.Status));
        Assert.Equal("lat_deg", result.Results[1].Field);
        Assert.Equal(2, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public async Task Ndjson_lines_are_messages_and_a_broken_line_is_rejected_alone()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string t = Now(-5);
        string body = $$"""{"vehicle":"v1","kind":"wheel","time":"{{t}}","speed_mps":2}""" + "\n{\"vehicle\":\n\n"
            + $$"""{"vehicle":"v1","kind":"imu","time":"{{t}}","yaw_rate_dps":1.5}""" + "\n";
        using var response = await client.PostAsync("/v1/telemetry", new StringContent(body, Encoding.UTF8, "application/x-ndjson"));
        var result = JsonSerializer.Deserialize<FusionService.Ingest.IngestResponse>(await response.Content.ReadAsStringAsync(), Api.Json)!;
        Assert.Equal((2, 0, 1), (result.Accepted, result.Duplicate, result.Rejected));
        Assert.StartsWith("line 2: not valid JSON", result.Results[1].Reason, StringComparison.Ordinal);
    }

    public static TheoryData<string, double, double> Accuracies => new()
    {
        // accuracy fields, reported value, sigma per axis. Circular Gaussian: R_p = sigma sqrt(-2 ln(1-p)) (derived,
        // Rayleigh distribution): CEP50 = 1.17741 sigma, R95 = 2.44775 sigma; DRMS = sqrt(2) sigma (derived).
        { "\"accuracy_kind\":\"one_sigma\"", 3.0, 3.0 },
        { "\"accuracy_kind\":\"cep50\"", 1.17741 * 3.0, 3.0 },
        { "\"accuracy_kind\":\"r95\"", 2.44775 * 3.0, 3.0 },
        { "\"accuracy_kind\":\"drms\"", Math.Sqrt(2) * 3.0, 3.0 },
    };

    [Theory]
    [MemberData(nameof(Accuracies))]
    public async Task Reported_accuracy_is_stored_as_sigma_per_axis(string kindField, double reportedM, double sigmaM)
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string body = "[{\"vehicle\":\"v1\",\"kind\":\"gnss\",\"time\":\"" + Now(-2) + "\",\"lat_deg\":45,\"lon_deg\":7,\"accuracy_m\":"
            + reportedM.ToString("R", CultureInfo.InvariantCulture) + "," + kindField + "}]";
        await client.IngestOkAsync(body);
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new Npgsql.NpgsqlCommand("SELECT v2 FROM measurements WHERE fleet_id = $1", connection);
        command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = fleet.Id });
        double stored = (double)(await command.ExecuteScalarAsync())!;
        // 5-digit factors and single-precision storage: 1e-4 m.
        AssertNear.Equal(sigmaM, stored, 1e-4, "sigma per axis (m)");
    }

    [Fact]
    public async Task Hdop_times_uere_is_the_drms()
    {
        // HDOP x UERE estimates DRMS (Misra and Enge, Global Positioning System, 2nd ed., ch. 6; from memory);
        // sigma per axis = DRMS / sqrt(2) (derived). Default UERE 5 m. Stored negated: it came from the HDOP
        // (Measurement.Value2), so SQL by hand reads abs(v2).
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        await client.IngestOkAsync("[{\"vehicle\":\"v1\",\"kind\":\"gnss\",\"time\":\"" + Now(-2) + "\",\"lat_deg\":45,\"lon_deg\":7,\"hdop\":1.2}]");
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new Npgsql.NpgsqlCommand("SELECT v2 FROM measurements WHERE fleet_id = $1", connection);
        command.Parameters.Add(new Npgsql.NpgsqlParameter { Value = fleet.Id });
        AssertNear.Equal(-1.2 * 5.0 / Math.Sqrt(2), (double)(await command.ExecuteScalarAsync())!, 1e-5, "sigma per axis (m), negated");
    }
}
