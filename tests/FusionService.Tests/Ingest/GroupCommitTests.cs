// Concurrent requests share commits; invalid options stop the start.
using System.Net;
using FusionService.Tests.Infrastructure;
using Microsoft.Extensions.Options;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class GroupCommitTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Concurrent_requests_are_committed_together()
    {
        var fleet = await fixture.NewFleetAsync();
        var drive = TelemetryDrive.Create("van-group", TelemetryDrive.StartUs(TimeSpan.FromMinutes(14)), seed: 63);
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Ingest:CommitWindowMs"] = "150" });
        using var client = fixture.Client(fleet.IngestKey, host);
        const int Requests = 16;
        var responses = await Task.WhenAll(Enumerable.Range(0, Requests).Select(i => client.PostJsonAsync(drive.Body(i * 10, (i + 1) * 10))));
        Assert.All(responses, r => Assert.Equal(HttpStatusCode.OK, r.StatusCode));
        string metrics = await fixture.Client(fleet.AdminKey, host).GetStringAsync("/metrics");
        long commits = (long)FusionService.LoadTools.PrometheusText.Value(metrics, "fusion_ingest_commit_duration_seconds_count");
        Assert.InRange(commits, 1, Requests - 1);
        Assert.Equal(drive.Messages.Take(Requests * 10).Sum(m => m.Core.Length), await fixture.CountAsync("SELECT count(*) FROM measurements WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public async Task Invalid_options_stop_the_start()
    {
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Ingest:MaxMessages"] = "0" });
        var error = Assert.ThrowsAny<Exception>(() => host.CreateClient());
        var validation = error as OptionsValidationException ?? error.InnerException as OptionsValidationException
            ?? (error as AggregateException)?.InnerExceptions.OfType<OptionsValidationException>().FirstOrDefault();
        Assert.NotNull(validation);
        Assert.Contains("MaxMessages", validation.Message, StringComparison.Ordinal);
    }
}
