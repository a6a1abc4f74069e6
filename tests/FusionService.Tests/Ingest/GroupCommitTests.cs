// Concurrent requests share commits; invalid options stop the start.
using System.Globalization;
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

    [Theory]
    [InlineData(1000, 1)]
    [InlineData(0, 2)]
    public async Task Issue16_a_gateways_next_batch_joins_the_commit_of_the_one_before_within_the_mixed_window(int mixedWindowMs, int commits)
    {
        // Two gateway batches 100 ms apart, each one wheel speed of each of three vans. Waiting the mixed window, the
        // second joins the first's commit and each van gets one chunk of two; without it, each batch commits on its own
        // and each van gets two chunks of one.
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Ingest:CommitWriters"] = "1",
            ["Ingest:CommitWindowMs"] = "0",
            ["Ingest:MixedCommitWindowMs"] = mixedWindowMs.ToString(CultureInfo.InvariantCulture),
        });
        var writer = host.Services.GetRequiredService<GroupCommitWriter>();
        // The middle of a ten-minute window of the past: both batches' measurements go to the same window's chunks.
        long timeUs = (MeasurementChunks.WindowOf(TelemetryDrive.StartUs(TimeSpan.FromMinutes(20))) * 600_000_000) + 300_000_000;
        string[] vans = ["mixed-van-1", "mixed-van-2", "mixed-van-3"];
        List<MeasurementRow> Batch(int k) => [.. vans.Select(van => MeasurementRows.ToRow(
            fleet.Id, van, Measurement.WheelSpeed(timeUs + (k * 100_000), (ulong)(k + 1), 4.0 + k), DateTime.UtcNow))];

        var first = writer.CommitAsync(Batch(0));
        await Task.Delay(100);
        var second = writer.CommitAsync(Batch(1));
        var outcomes = await Task.WhenAll(first, second);

        Assert.All(outcomes, o => Assert.Equal(vans.Length, o.Inserted.Count));
        Assert.Equal(commits, outcomes.Select(o => o.TransactionIdOf(fleet.Id, vans[0])).Distinct().Count());
        Assert.Equal(commits * vans.Length, await fixture.CountAsync("SELECT count(*) FROM measurement_chunks WHERE fleet_id = $1", fleet.Id));
    }

    [Fact]
    public async Task Issue16_one_vans_uploads_do_not_wait_for_the_mixed_window()
    {
        // The same two batches 100 ms apart as above, but each the upload of one van: the first commits at once (a
        // second upload of the same van rarely follows within the window, so waiting would only add latency).
        var fleet = await fixture.NewFleetAsync();
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Ingest:CommitWriters"] = "1",
            ["Ingest:CommitWindowMs"] = "0",
            ["Ingest:MixedCommitWindowMs"] = "1000",
        });
        var writer = host.Services.GetRequiredService<GroupCommitWriter>();
        long timeUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(20));
        List<MeasurementRow> Upload(int k) => [.. Enumerable.Range(k * 20, 20).Select(i => MeasurementRows.ToRow(
            fleet.Id, "single-van", Measurement.WheelSpeed(timeUs + (i * 100_000), (ulong)(i + 1), 4.0), DateTime.UtcNow))];

        var first = writer.CommitAsync(Upload(0));
        await Task.Delay(100);
        var second = writer.CommitAsync(Upload(1));
        var outcomes = await Task.WhenAll(first, second);

        Assert.All(outcomes, o => Assert.Equal(20, o.Inserted.Count));
        Assert.Equal(2, outcomes.Select(o => o.TransactionIdOf(fleet.Id, "single-van")).Distinct().Count());
    }

    [Theory]
    [InlineData(500, 1, true)] // a gateway: one message of each of 500 vans
    [InlineData(5000, 10, true)] // ten of each of 500 vans
    [InlineData(315, 315, false)] // one van's 15 s upload
    [InlineData(400, 200, false)] // two vans' uploads together
    [InlineData(3, 3, false)] // one van's few messages: nothing to join
    public void A_request_is_mixed_when_its_vehicles_have_fewer_than_100_rows_each(int rows, int perVehicle, bool mixed)
    {
        var fleetId = Guid.NewGuid();
        var batch = Enumerable.Range(0, rows).Select(i => MeasurementRows.ToRow(
            fleetId, "van-" + (i / perVehicle).ToString(CultureInfo.InvariantCulture), Measurement.WheelSpeed(1_764_000_000_000_000 + (i * 1000L), 1, 4.0), DateTime.UtcNow)).ToList();

        Assert.Equal(mixed, new CommitRequest(batch).Mixed);
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
