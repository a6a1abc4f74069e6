// The fold of a closed window's small chunks into one: nothing lost or changed, duplicates still found, verdicts still land.
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Storage.History;
using FusionService.Storage.Measurements;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.Measurements;

[Collection(PostgresCollection.Name)]
public sealed class ChunkFoldTests(PostgresFixture server)
{
    // Every column of every stored measurement, as text (float8 and float4 text output round-trips exactly: PostgreSQL 15
    // manual, section 8.1.3, extra_float_digits default 1); the same text before and after means the same values.
    private const string AllText = """
        SELECT string_agg(concat_ws('|', vehicle_id, kind, time_us, message_key, received_at, v0, v1, v2, flags, outcome,
                                    nis, track_reset, w0, w1), E'\n' ORDER BY vehicle_id, time_us, kind, message_key)
        FROM measurements
        """;

    private static MeasurementRow Row(Guid fleet, string vehicle, long timeUs, long key, short kind = 0, double? v1 = 8.5, double? v2 = 3.0) => new(
        fleet, vehicle, kind, timeUs, key, UnixMicroseconds.ToDateTimeUtc(timeUs + 250_000), 46.0 + timeUs % 1_000_000 * 1e-9, v1, v2, 0,
        OutcomeKind.Pending, null, false);

    private Task<(TestSchema Schema, Guid Fleet)> NewStoreAsync() => server.NewFleetStoreAsync();

    private static Task<HashSet<MeasurementKey>> CommitAsync(TestSchema schema, IReadOnlyList<MeasurementRow> rows) =>
        MeasurementStores.CommitAsync(schema, rows);

    // A gateway's commits: each carries one measurement of each van (a GNSS fix every second, a wheel speed between).
    private static async Task<List<MeasurementRow>> GatewayAsync(TestSchema schema, Guid fleet, string[] vans, long startUs, int commits)
    {
        var all = new List<MeasurementRow>();
        for (int i = 0; i < commits; i++)
        {
            var rows = vans.Select(v => i % 2 == 0
                ? Row(fleet, v, startUs + i * 500_000L, i)
                : Row(fleet, v, startUs + i * 500_000L, i, kind: 1, v1: null, v2: null)).ToList();
            await CommitAsync(schema, rows);
            all.AddRange(rows);
        }

        return all;
    }

    private static Task<long> ChunkCountAsync(TestSchema schema, string vehicle) =>
        schema.ScalarAsync<long>("SELECT count(*) FROM measurement_chunks WHERE vehicle_id = $1", vehicle);

    [Fact]
    public async Task A_gateways_small_chunks_of_a_closed_window_fold_into_one_chunk_holding_every_measurement_and_verdict()
    {
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 9, 0, 0, 0);
        long window = MeasurementChunks.WindowOf(t);
        var rows = await GatewayAsync(schema, fleet, ["van-a", "van-b"], t, 40);
        // Verdicts of every kind the arrays hold: accepted with NIS and whitened innovation, gated, a reset, none yet.
        var verdicts = rows.Where(r => r.VehicleId == "van-a").Take(30).Select((r, i) => new MeasurementOutcomeUpdate(
            MeasurementKey.Of(r), i % 3 == 0 ? OutcomeKind.Gated : OutcomeKind.Accepted, i % 5 == 0 ? null : 0.25 * i, i == 7)
        {
            Whitened0 = i % 2 == 0 ? 0.5f * i : null,
            Whitened1 = i % 4 == 0 ? -0.125f * i : null,
        }).ToList();
        Assert.Equal(verdicts.Count, await MeasurementVerdictWriter.WriteAsync(schema.DataSource, verdicts));
        // A van whose tracker uploads its buffer: one chunk of 150 in the same window, left as it is.
        await CommitAsync(schema, [.. Enumerable.Range(0, 150).Select(i => Row(fleet, "van-c", t + i * 100_000L, i))]);
        Assert.Equal(40, await ChunkCountAsync(schema, "van-a"));
        string before = await schema.ScalarAsync<string>(AllText);

        var result = await MeasurementChunkFolder.FoldAsync(
            schema.DataSource, [(fleet, "van-a", window), (fleet, "van-b", window), (fleet, "van-c", window)]);

        Assert.Equal(new ChunkFoldResult(80, 2, 80), result);
        Assert.Equal(before, await schema.ScalarAsync<string>(AllText));
        Assert.Equal(1, await ChunkCountAsync(schema, "van-a"));
        Assert.Equal(1, await ChunkCountAsync(schema, "van-b"));
        Assert.Equal(1, await ChunkCountAsync(schema, "van-c"));
        // The folded chunk is in canonical order and spans its measurements, as one upload of the window would be.
        Assert.True(await schema.ScalarAsync<bool>(
            "SELECT time_us = (SELECT array_agg(x ORDER BY x) FROM unnest(time_us) AS x) AND first_us = $1 AND last_us = $2 AND count = 40 "
            + "FROM measurement_chunks WHERE vehicle_id = 'van-a'", t, t + 39 * 500_000L));
        // A second pass finds nothing to fold.
        Assert.Equal(new ChunkFoldResult(0, 0, 0), await MeasurementChunkFolder.FoldAsync(schema.DataSource, [(fleet, "van-a", window)]));
    }

    [Fact]
    public async Task After_a_fold_resent_messages_are_still_duplicates_and_late_data_folds_in_at_the_next_pass()
    {
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 10, 0, 0, 0);
        long window = MeasurementChunks.WindowOf(t);
        var rows = await GatewayAsync(schema, fleet, ["van-a"], t, 12);
        await MeasurementChunkFolder.FoldAsync(schema.DataSource, [(fleet, "van-a", window)]);

        // The gateway resends its last three commits, with one new message late into the same window.
        var late = Row(fleet, "van-a", t + 3 * 500_000L + 1, 99);
        var inserted = await CommitAsync(schema, [.. rows.TakeLast(3), late]);
        Assert.Equal([MeasurementKey.Of(late)], inserted);
        Assert.Equal(2, await ChunkCountAsync(schema, "van-a"));

        Assert.Equal(new ChunkFoldResult(2, 1, 13), await MeasurementChunkFolder.FoldAsync(schema.DataSource, [(fleet, "van-a", window)]));
        var read = new List<long>();
        await new TrackHistoryReader(schema.DataSource, 2).ReadReplayMeasurementsAsync(
            fleet, "van-a", t, t + 600_000_000, 0, short.MaxValue, m => read.Add(m.TimeUs));
        Assert.Equal(rows.Select(r => r.TimeUs).Append(late.TimeUs).Order(), read);
    }

    [Fact]
    public async Task A_verdict_written_while_a_fold_holds_its_chunks_lands_in_the_folded_chunk()
    {
        // The verdict writer locks the chunks a verdict can be in (SELECT ... FOR UPDATE). When a fold deleted them while
        // the writer waited, the writer skips the deleted rows: "if the first updater commits and deleted the row, the
        // second updater will ignore the row" (PostgreSQL 15 manual, 13.2.1 Read Committed Isolation Level), and the
        // folded chunk is not in its statement's snapshot. Without a second look the verdicts would be lost.
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 11, 0, 0, 0);
        long window = MeasurementChunks.WindowOf(t);
        var rows = await GatewayAsync(schema, fleet, ["van-a"], t, 10);
        var verdicts = rows.Select((r, i) => new MeasurementOutcomeUpdate(MeasurementKey.Of(r), OutcomeKind.Accepted, 0.5 + i, false)).ToList();

        await using var folding = await schema.OpenAsync();
        await using var fold = await folding.BeginTransactionAsync();
        await using (var command = MeasurementChunkFolder.FoldCommand(folding, fold, [(fleet, "van-a", window)]))
        {
            await command.ExecuteNonQueryAsync();
        }

        var write = MeasurementVerdictWriter.WriteAsync(schema.DataSource, verdicts);
        var deadline = DateTime.UtcNow.AddSeconds(20);
        while (!await schema.ScalarAsync<bool>(
            "SELECT EXISTS (SELECT 1 FROM pg_stat_activity WHERE wait_event_type = 'Lock' AND query LIKE '%FOR UPDATE OF c%' "
            + "AND datname = current_database())"))
        {
            Assert.True(DateTime.UtcNow < deadline, "the verdict writer never waited for the fold's locks");
            Assert.False(write.IsCompleted, "the verdict writer finished without waiting for the fold");
            await Task.Delay(20);
        }

        await fold.CommitAsync();
        Assert.Equal(verdicts.Count, await write);
        Assert.Equal(1, await ChunkCountAsync(schema, "van-a"));
        Assert.Equal(
            string.Join(',', verdicts.Select(v => v.Nis!.Value.ToString(System.Globalization.CultureInfo.InvariantCulture))),
            await schema.ScalarAsync<string>("SELECT array_to_string(nis, ',') FROM measurement_chunks WHERE vehicle_id = 'van-a'"));
    }

    [Fact]
    public async Task Only_one_fold_runs_at_a_time_across_processes()
    {
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);
        await GatewayAsync(schema, fleet, ["van-a"], t, 4);
        await using var other = await schema.OpenAsync();
        await using var holding = await other.BeginTransactionAsync();
        await using (var command = new NpgsqlCommand("SELECT pg_advisory_xact_lock(hashtextextended('FusionService chunk fold', 0))", other, holding))
        {
            await command.ExecuteNonQueryAsync();
        }

        Assert.Null(await MeasurementChunkFolder.FoldAsync(schema.DataSource, [(fleet, "van-a", MeasurementChunks.WindowOf(t))]));
        Assert.Equal(4, await ChunkCountAsync(schema, "van-a"));
    }
}
