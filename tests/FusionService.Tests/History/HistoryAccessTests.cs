// Fleet isolation, roles and request validation of the track and distance endpoints.
using System.Net;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.History;

[Collection(ServiceTests.Name)]
public sealed class HistoryAccessTests(ServiceFixture fixture)
{
    private static readonly SemaphoreSlim Gate = new(1, 1);
    private static (TestFleet Fleet, long StartUs)? _shared;

    private async Task<(TestFleet Fleet, long StartUs)> SharedAsync()
    {
        await Gate.WaitAsync();
        try
        {
            if (_shared is null)
            {
                var fleet = await fixture.NewFleetAsync();
                long startUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(9));
                var drive = TelemetryDrive.Create("van-acl", startUs, seed: 61);
                using var ingest = fixture.Client(fleet.IngestKey);
                for (int i = 0; i < drive.Messages.Count; i += 500)
                {
                    await ingest.IngestOkAsync(drive.Body(i, Math.Min(i + 500, drive.Messages.Count)));
                }

                await fixture.Host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);
                _shared = (fleet, startUs);
            }

            return _shared.Value;
        }
        finally
        {
            Gate.Release();
        }
    }

    private static string Window(long startUs, double hours = 1) =>
        "from=" + HistoryDrive.Time(startUs) + "&to=" + HistoryDrive.Time(startUs + (long)(hours * 3.6e9));

    [Theory]
    [InlineData("track?kind=raw&")]
    [InlineData("track?kind=filtered&")]
    [InlineData("track?kind=smoothed&")]
    [InlineData("distance?")]
    public async Task Another_fleets_vehicle_is_404_like_an_unknown_one(string path)
    {
        var (fleet, startUs) = await SharedAsync();
        var other = await fixture.NewFleetAsync();
        using var own = fixture.Client(fleet.ReadKey);
        using var stranger = fixture.Client(other.ReadKey);
        using var ok = await own.GetAsync("/v1/vehicles/van-acl/" + path + Window(startUs));
        Assert.Equal(HttpStatusCode.OK, ok.StatusCode);
        using var foreign = await stranger.GetAsync("/v1/vehicles/van-acl/" + path + Window(startUs));
        using var unknown = await own.GetAsync("/v1/vehicles/no-such-van/" + path + Window(startUs));
        Assert.Equal(HttpStatusCode.NotFound, foreign.StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, unknown.StatusCode);
        string foreignDetail = (await foreign.ProblemAsync()).GetProperty("detail").GetString()!;
        string unknownDetail = (await unknown.ProblemAsync()).GetProperty("detail").GetString()!;
        Assert.Equal(unknownDetail.Replace("no-such-van", "van-acl", StringComparison.Ordinal), foreignDetail);
    }

    [Theory]
    [InlineData("track?")]
    [InlineData("distance?")]
    public async Task Read_and_admin_keys_pass_ingest_keys_are_403_and_no_key_is_401(string path)
    {
        var (fleet, startUs) = await SharedAsync();
        string url = "/v1/vehicles/van-acl/" + path + Window(startUs);
        using var read = fixture.Client(fleet.ReadKey);
        using var admin = fixture.Client(fleet.AdminKey);
        using var ingest = fixture.Client(fleet.IngestKey);
        using var none = fixture.Client(null);
        Assert.Equal(HttpStatusCode.OK, (await read.GetAsync(url)).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await admin.GetAsync(url)).StatusCode);
        var forbidden = await ingest.GetAsync(url);
        Assert.Equal(HttpStatusCode.Forbidden, forbidden.StatusCode);
        Assert.Contains("role read or admin", (await forbidden.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.Unauthorized, (await none.GetAsync(url)).StatusCode);
    }

    [Theory]
    [InlineData("track", "to=2026-01-01T00:00:00Z", "from:")]
    [InlineData("track", "from=yesterday&to=2026-01-01T00:00:00Z", "from:")]
    [InlineData("track", "from=2026-01-01T00:00:00&to=2026-01-01T01:00:00Z", "from:")]
    [InlineData("track", "from=2026-01-01T00:00:00Z", "to:")]
    [InlineData("track", "from=2026-01-01T01:00:00Z&to=2026-01-01T01:00:00Z", "to: must be after from")]
    [InlineData("track", "from=1767229200000&to=1767225600000", "to: must be after from")]
    [InlineData("track", "from=2026-01-01T00:00:00Z&to=2026-01-02T00:00:01Z", "to: the window")]
    [InlineData("track", "from=2026-01-01T00:00:00Z&to=2026-01-01T01:00:00Z&kind=fused", "kind:")]
    [InlineData("track", "from=2026-01-01T00:00:00Z&to=2026-01-01T01:00:00Z&format=kml", "format:")]
    [InlineData("track", "from=2026-01-01T00:00:00Z&to=2026-01-01T01:00:00Z&step=-1", "step:")]
    [InlineData("track", "from=2026-01-01T00:00:00Z&to=2026-01-01T01:00:00Z&step=abc", "step:")]
    [InlineData("track", "from=2026-01-01T00:00:00Z&to=2026-01-01T01:00:00Z&step=7200", "step:")]
    [InlineData("distance", "from=2026-01-01T00:00:00Z", "to:")]
    [InlineData("distance", "from=2026-01-01T00:00:00Z&to=2026-01-03T00:00:00Z", "to: the window")]
    public async Task Bad_parameters_are_400_problems_naming_the_parameter(string endpoint, string query, string detailStart)
    {
        var (fleet, _) = await SharedAsync();
        using var read = fixture.Client(fleet.ReadKey);
        using var response = await read.GetAsync("/v1/vehicles/van-acl/" + endpoint + "?" + query);
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var problem = await response.ProblemAsync();
        Assert.StartsWith(detailStart, problem.GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(400, problem.GetProperty("status").GetInt32());
    }

    [Theory]
    [InlineData("application/geo+json", "application/geo+json")]
    [InlineData("application/gpx+xml", "application/gpx+xml")]
    [InlineData("text/csv", "text/csv")]
    [InlineData("text/html, application/gpx+xml;q=0.5", "application/gpx+xml")]
    [InlineData("*/*", "application/json")]
    public async Task Accept_chooses_the_format_when_format_is_absent(string accept, string expected)
    {
        var (fleet, startUs) = await SharedAsync();
        using var read = fixture.Client(fleet.ReadKey);
        using var request = new HttpRequestMessage(HttpMethod.Get, "/v1/vehicles/van-acl/track?kind=filtered&" + Window(startUs));
        request.Headers.TryAddWithoutValidation("Accept", accept);
        using var response = await read.SendAsync(request);
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Equal(expected, response.Content.Headers.ContentType?.MediaType);
    }
}
