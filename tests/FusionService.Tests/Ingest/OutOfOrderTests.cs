// Batches arriving out of order give the same stored outcomes and state as in order.
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;
using Npgsql;

namespace FusionService.Tests.Ingest;

[Collection(ServiceTests.Name)]
public sealed class OutOfOrderTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Swapped_batches_store_the_same_outcomes_and_reach_the_same_state()
    {
        var fleet = await fixture.NewFleetAsync();
        long startUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(7));
        var inOrder = TelemetryDrive.Create("van-a", startUs, seed: 51);
        var shuffled = TelemetryDrive.Create("van-b", startUs, seed: 51);
        using var client = fixture.Client(fleet.IngestKey);
        const int Batch = 40;
        var batches = Enumerable.Range(0, (inOrder.Messages.Count + Batch - 1) / Batch).ToList();
        foreach (int b in batches)
        {
            await client.IngestOkAsync(inOrder.Body(b * Batch, Math.Min((b + 1) * Batch, inOrder.Messages.Count)));
        }

        // Swap each pair of neighbouring batches (a delay of about two seconds, inside the replay window).
        for (int i = 0; i + 1 < batches.Count; i += 2)
        {
            (batches[i], batches[i + 1]) = (batches[i + 1], batches[i]);
        }

        foreach (int b in batches)
        {
            await client.IngestOkAsync(shuffled.Body(b * Batch, Math.Min((b + 1) * Batch, shuffled.Messages.Count)));
        }

        await fixture.Host.Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
        var a = await OutcomesAsync(fleet.Id, "van-a");
        var b2 = await OutcomesAsync(fleet.Id, "van-b");
        Assert.Equal(inOrder.Messages.Sum(m => m.Core.Length), a.Count);
        Assert.DoesNotContain(a, o => o.Outcome == 4);
        Assert.Equal(a, b2);
        using var read = fixture.Client(fleet.ReadKey);
        var stateA = await read.StateAsync("van-a");
        var stateB = await read.StateAsync("van-b");
        Assert.Equal(stateA with { Vehicle = "x" }, stateB with { Vehicle = "x" });
    }

    private async Task<List<(long TimeUs, short Kind, long Key, short Outcome, double? Nis)>> OutcomesAsync(Guid fleet, string vehicle)
    {
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new NpgsqlCommand(
            "SELECT time_us, kind, message_key, outcome, nis FROM " + JudgedSql.OfVehicle + " ORDER BY time_us, kind, message_key",
            connection);
        command.Parameters.Add(new NpgsqlParameter { Value = fleet });
        command.Parameters.Add(new NpgsqlParameter { Value = vehicle });
        var list = new List<(long, short, long, short, double?)>();
        await using var reader = await command.ExecuteReaderAsync();
        while (await reader.ReadAsync())
        {
            list.Add((reader.GetInt64(0), reader.GetInt16(1), reader.GetInt64(2), reader.GetInt16(3), reader.IsDBNull(4) ? null : reader.GetDouble(4)));
        }

        return list;
    }
}
