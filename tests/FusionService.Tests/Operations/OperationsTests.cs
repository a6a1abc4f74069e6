// Health, metrics and the committed OpenAPI document.
using System.Net;
using System.Text.Json;
using System.Text.Json.Nodes;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Operations;

[Collection(ServiceTests.Name)]
public sealed class OperationsTests(ServiceFixture fixture)
{
    /// <summary>Set to 1 to rewrite <c>openapi/fusionservice.v1.json</c> from the running service.</summary>
    public const string UpdateVariable = "FUSION_UPDATE_OPENAPI";

    [Fact]
    public async Task Live_and_ready_are_healthy()
    {
        using var client = fixture.Client(null);
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/health/live")).StatusCode);
        using var ready = await client.GetAsync("/health/ready");
        Assert.Equal(HttpStatusCode.OK, ready.StatusCode);
        Assert.Equal("Healthy", await ready.Content.ReadAsStringAsync());
    }

    [Fact]
    public async Task Metrics_count_ingested_messages_in_prometheus_text()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.AdminKey);
        double before = Value(await client.GetStringAsync("/metrics"), "fusion_ingest_messages_total{fusion_outcome=\"accepted\"}");
        var drive = TelemetryDrive.Create("van-metrics", TelemetryDrive.StartUs(TimeSpan.FromMinutes(11)), seed: 91);
        await fixture.Client(fleet.IngestKey).IngestOkAsync(drive.Body(0, 25));
        using var response = await client.GetAsync("/metrics");
        Assert.Equal("text/plain", response.Content.Headers.ContentType?.MediaType);
        string text = await response.Content.ReadAsStringAsync();
        Assert.Equal(before + 25, Value(text, "fusion_ingest_messages_total{fusion_outcome=\"accepted\"}"));
        Assert.Contains("# TYPE fusion_ingest_commit_duration_seconds histogram", text, StringComparison.Ordinal);
        Assert.True(Value(text, "fusion_ingest_commit_duration_seconds_count") >= 1);
        Assert.False(double.IsNaN(FusionService.LoadTools.PrometheusText.Value(text, "fusion_ingest_write_queue_depth")), "write-queue depth served");
        // Judged before the answer (the test host acknowledges after the tracks): every measurement of the 25 messages.
        Assert.True(Value(text, "fusion_track_measurements_total") >= 25);
    }

    [Fact]
    public async Task Metrics_token_when_configured_is_required()
    {
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Operations:MetricsToken"] = "scrape-secret" });
        using var anonymous = fixture.Client(null, host);
        using var refused = await anonymous.GetAsync("/metrics");
        Assert.Equal(HttpStatusCode.Unauthorized, refused.StatusCode);
        Assert.Contains("Operations:MetricsToken", await refused.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        using var wrong = fixture.Client("scrape-secreT", host);
        Assert.Equal(HttpStatusCode.Unauthorized, (await wrong.GetAsync("/metrics")).StatusCode);
        using var scraper = fixture.Client("scrape-secret", host);
        string text = await scraper.GetStringAsync("/metrics");
        // A histogram appears with its first observation; the gauges are there from the start.
        Assert.Contains("# TYPE fusion_track_batches_in_flight gauge", text, StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.OK, (await anonymous.GetAsync("/health/live")).StatusCode);
    }

    [Fact]
    public async Task Issue14_metrics_need_an_admin_key_or_the_scrape_token_by_default()
    {
        var fleet = await fixture.NewFleetAsync();
        using var anonymous = fixture.Client(null);
        using var refused = await anonymous.GetAsync("/metrics");
        Assert.Equal(HttpStatusCode.Unauthorized, refused.StatusCode);
        Assert.Contains("admin API key", (await refused.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Client("fsk_not-a-key").GetAsync("/metrics")).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(fleet.ReadKey).GetAsync("/metrics")).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(fleet.IngestKey).GetAsync("/metrics")).StatusCode);
        Assert.False(double.IsNaN(FusionService.LoadTools.PrometheusText.Value(await fixture.Client(fleet.AdminKey).GetStringAsync("/metrics"), "fusion_history_reads_active")));

        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Operations:MetricsToken"] = "scrape-secret",
            ["Operations:MetricsAnonymous"] = "false",
        });
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(fleet.AdminKey, host).GetAsync("/metrics")).StatusCode);
        await using var open = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Operations:MetricsAnonymous"] = "true" });
        Assert.Equal(HttpStatusCode.OK, (await fixture.Client(null, open).GetAsync("/metrics")).StatusCode);
    }

    [Fact]
    public async Task A_gnss_outlier_is_stored_as_gated_and_counted()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-gate", TelemetryDrive.StartUs(TimeSpan.FromMinutes(15)), seed: 92);
        using var ingest = fixture.Client(fleet.IngestKey);
        await ingest.IngestOkAsync(drive.Body(0, 400));
        var lastFix = drive.Messages.Take(400).Last(m => (string)m.Message["kind"]! == "gnss");
        long outlierUs = drive.Messages[399].Core[0].TimeUs + 50_000;
        // 0.005 degree of latitude is about 555 m: far outside a 3 m fix's chi-square gate.
        string outlier = "[{\"vehicle\":\"van-gate\",\"kind\":\"gnss\",\"id\":\"outlier\",\"time\":"
            + (outlierUs / 1000.0).ToString("R", System.Globalization.CultureInfo.InvariantCulture)
            + ",\"lat_deg\":" + ((double)lastFix.Message["lat_deg"]! + 0.005).ToString("R", System.Globalization.CultureInfo.InvariantCulture)
            + ",\"lon_deg\":" + ((double)lastFix.Message["lon_deg"]!).ToString("R", System.Globalization.CultureInfo.InvariantCulture)
            + ",\"accuracy_m\":3}]";
        using var client = fixture.Client(fleet.AdminKey);
        double before = Value(await client.GetStringAsync("/metrics"), "fusion_track_measurements_total{fusion_outcome=\"gated\"}");
        Assert.Equal(1, (await ingest.IngestOkAsync(outlier)).Accepted);
        Assert.Equal(before + 1, Value(await client.GetStringAsync("/metrics"), "fusion_track_measurements_total{fusion_outcome=\"gated\"}"));
        await fixture.Host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);
        Assert.Equal(1, await fixture.CountAsync(
            "SELECT outcome FROM " + JudgedSql.OfFleet + " WHERE message_key = $2", fleet.Id, (long)FusionService.Ingest.MessageKeys.FromId("outlier")));
    }

    [Fact]
    public async Task Committed_openapi_document_is_current()
    {
        using var client = fixture.Client(null);
        string served = JsonNode.Parse(await client.GetStringAsync("/openapi/v1.json"))!
            .ToJsonString(new JsonSerializerOptions { WriteIndented = true, Encoder = System.Text.Encodings.Web.JavaScriptEncoder.UnsafeRelaxedJsonEscaping }) + "\n";
        string path = Path.Combine(RepositoryRoot(), "openapi", "fusionservice.v1.json");
        if (Environment.GetEnvironmentVariable(UpdateVariable) == "1")
        {
            Directory.CreateDirectory(Path.GetDirectoryName(path)!);
            await File.WriteAllTextAsync(path, served);
        }

        Assert.True(File.Exists(path), "openapi/fusionservice.v1.json is missing; regenerate with " + UpdateVariable + "=1");
        Assert.True(served == await File.ReadAllTextAsync(path),
            "openapi/fusionservice.v1.json is stale; regenerate: " + UpdateVariable + "=1 dotnet test tests/FusionService.Tests --filter Committed_openapi_document_is_current");
        var document = JsonNode.Parse(served)!;
        foreach (var (route, item) in document["paths"]!.AsObject())
        {
            foreach (var (_, operation) in item!.AsObject())
            {
                Assert.False(string.IsNullOrWhiteSpace((string?)operation!["operationId"]), route + ": no name");
                Assert.False(string.IsNullOrWhiteSpace((string?)operation["summary"]), route + ": no summary");
                Assert.False(string.IsNullOrWhiteSpace((string?)operation["description"]), route + ": no description");
            }
        }

        Assert.Contains("collision avoidance", (string?)document["info"]!["description"], StringComparison.Ordinal);
        Assert.Contains("personal data", (string?)document["info"]!["description"], StringComparison.Ordinal);
    }

    [Fact]
    public async Task Swagger_ui_serves_the_document()
    {
        using var client = fixture.Client(null);
        using var page = await client.GetAsync("/swagger/index.html");
        Assert.Equal(HttpStatusCode.OK, page.StatusCode);
        Assert.Contains("/openapi/v1.json", await client.GetStringAsync("/swagger/index.js"), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Requests_over_the_per_key_rate_limit_are_429()
    {
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Security:RateLimitPermits"] = "3",
            ["Security:RateLimitWindowSeconds"] = "3600",
        });
        using var read = fixture.Client(fleet.ReadKey, host);
        using var other = fixture.Client(fleet.AdminKey, host);
        for (int i = 0; i < 3; i++)
        {
            Assert.Equal(HttpStatusCode.OK, (await read.GetAsync("/v1/vehicles")).StatusCode);
        }

        Assert.Equal(HttpStatusCode.TooManyRequests, (await read.GetAsync("/v1/vehicles")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await other.GetAsync("/v1/vehicles")).StatusCode);
    }

    /// <summary>The sum of the matching samples; a series not written yet (nothing counted so far) counts zero.</summary>
    private static double Value(string metrics, string name) =>
        FusionService.LoadTools.PrometheusText.Value(metrics, name) is var value && double.IsNaN(value) ? 0 : value;

    private static string RepositoryRoot()
    {
        var folder = new DirectoryInfo(AppContext.BaseDirectory);
        while (folder is not null && !File.Exists(Path.Combine(folder.FullName, "FusionService.sln")))
        {
            folder = folder.Parent;
        }

        return folder?.FullName ?? throw new InvalidOperationException("FusionService.sln not found above " + AppContext.BaseDirectory);
    }
}
