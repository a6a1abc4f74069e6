// Concurrent requests share commits; invalid options stop the start.
using System.Net;
using FusionService.Estimation.Measurements;
using FusionService.Ingest;
using FusionService.Storage.Measurements;
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
    public async Task Issue16_a_batch_over_many_vans_is_split_over_the_writers_each_van_in_one_commit()
    {
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Ingest:CommitWriters"] = "2" });
        using var client = fixture.Client(fleet.ReadKey, host);
        long timeUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(20));
        var vans = Enumerable.Range(0, 40).Select(i => $"gateway-van-{i:00}").ToList();
        var rows = vans.SelectMany(van => Enumerable.Range(0, 3).Select(k => MeasurementRows.ToRow(
            fleet.Id, van, Measurement.WheelSpeed(timeUs + (k * 100_000), (ulong)(k + 1), 4.0 + k), DateTime.UtcNow))).ToList();

        var committed = await host.Services.GetRequiredService<GroupCommitWriter>().CommitAsync(rows);

        Assert.Equal(rows.Count, committed.Inserted.Count);
        var byVan = vans.ToDictionary(van => van, van => committed.TransactionIdOf(fleet.Id, van));
        Assert.Equal(2, byVan.Values.Distinct().Count());
        Assert.All(vans, van => Assert.Equal(
            byVan[van], committed.TransactionIdOf(fleet.Id, vans.First(v => IngestBuckets.Of(fleet.Id, v) % 2 == IngestBuckets.Of(fleet.Id, van) % 2))));

        // Each van's rows were stored by the transaction its tracks are told of (xmin is the low 32 bits of the xid8).
        foreach (var van in vans)
        {
            long xmin = await fixture.CountAsync(
                "SELECT min(xmin::text::bigint) FROM measurement_chunks WHERE fleet_id = $1 AND vehicle_id = '" + van + "'", fleet.Id);
            Assert.Equal(byVan[van] & 0xFFFF_FFFF, xmin);
        }
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
