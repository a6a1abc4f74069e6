// Duplicates are idempotent, within a request, across requests and without ids.
using System.Globalization;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class DuplicateTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Resending_a_batch_reports_duplicates_and_stores_nothing_new()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-dup", TelemetryDrive.StartUs(TimeSpan.FromMinutes(6)), seed: 41);
        using var client = fixture.Client(fleet.IngestKey);
        var first = await client.IngestOkAsync(drive.Body(0, 150));
        long rows = await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id);
        var again = await client.IngestOkAsync(drive.Body(0, 150));
        Assert.Equal((150, 0), (first.Accepted, first.Duplicate));
        Assert.Equal((0, 150), (again.Accepted, again.Duplicate));
        Assert.Equal(rows, await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
        var before = await fixture.Client(fleet.ReadKey).StateAsync("van-dup");
        await client.IngestOkAsync(drive.Body(0, 150));
        Assert.Equal(before, await fixture.Client(fleet.ReadKey).StateAsync("van-dup"));
    }

    [Fact]
    public async Task Same_id_twice_in_one_request_is_accepted_once()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string t = DateTimeOffset.UtcNow.AddSeconds(-3).ToString("O", CultureInfo.InvariantCulture);
        string m = $$"""{"vehicle":"v","kind":"wheel","time":"{{t}}","id":"w1","speed_mps":3}""";
        var result = await client.IngestOkAsync("[" + m + "," + m + "]");
        Assert.Equal(["accepted", "duplicate"], result.Results.Select(r => r.Status));
    }

    [Fact]
    public async Task Without_id_an_identical_retry_is_a_duplicate_and_different_content_is_not()
    {
        var fleet = await fixture.NewFleetAsync();
        using var client = fixture.Client(fleet.IngestKey);
        string t = DateTimeOffset.UtcNow.AddSeconds(-3).ToString("O", CultureInfo.InvariantCulture);
        string a = $$"""{"vehicle":"v","kind":"imu","time":"{{t}}","yaw_rate_dps":2}""";
        string b = $$"""{"vehicle":"v","kind":"imu","time":"{{t}}","yaw_rate_dps":2.5}""";
        Assert.Equal(1, (await client.IngestOkAsync("[" + a + "]")).Accepted);
        var retry = await client.IngestOkAsync("[" + a + "," + b + "]");
        Assert.Equal(["duplicate", "accepted"], retry.Results.Select(r => r.Status));
    }
}
