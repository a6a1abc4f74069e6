// The replay read (binary COPY export): same rows as the row-by-row reader, duplicates left out, exact values.
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Storage.History;
using FusionService.Storage.Measurements;
using FusionService.Storage.Partitions;
using FusionService.Storage.Tests.Infrastructure;

namespace FusionService.Storage.Tests.History;

[Collection(PostgresCollection.Name)]
public sealed class ReplayReadTests(PostgresFixture server)
{
    private static readonly Guid Fleet = Guid.Parse("0195a0c1-0000-7000-8000-000000000041");
    private static readonly Guid OtherFleet = Guid.Parse("0195a0c1-0000-7000-8000-000000000042");

    // A quote, a backslash and a statement terminator: the id must reach the server as a value, never as SQL text.
    private const string Vehicle = "van-'4'; DROP TABLE measurements; --\\";

    [Fact]
    public async Task Windows_written_by_several_commits_read_back_in_canonical_order_by_both_readers()
    {
        // Three commits write into the same ten-minute window out of order (a late upload and a resend of other keys), a
        // fourth into the next window: the readers merge the window's chunks (migration 0013) into canonical order.
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        var t = TestTimes.At(TestTimes.Day, 10, 0, 0, 0);
        MeasurementRow[][] commits =
        [
            [Row(Fleet, Vehicle, 2, t + 300_000_000, 1, 1.0, null, null, OutcomeKind.Accepted), Row(Fleet, Vehicle, 2, t + 400_000_000, 2, 2.0, null, null, OutcomeKind.Accepted)],
            [Row(Fleet, Vehicle, 0, t + 100_000_000, 3, 3.0, 4.0, 5.0, OutcomeKind.Gated), Row(Fleet, Vehicle, 3, t + 350_000_000, 4, 6.0, 7.0, null, OutcomeKind.Accepted)],
            [Row(Fleet, Vehicle, 2, t + 300_000_000, 0, 8.0, null, null, OutcomeKind.Accepted), Row(Fleet, Vehicle, 1, t + 599_999_999, 5, 9.0, 10.0, null, OutcomeKind.Accepted)],
            [Row(Fleet, Vehicle, 2, t + 600_000_000, 6, 11.0, null, null, OutcomeKind.Accepted), Row(Fleet, Vehicle, 2, t + 200_000_000, 7, 12.0, null, null, OutcomeKind.Accepted)],
        ];
        foreach (var commit in commits)
        {
            await using var connection = await schema.OpenAsync();
            await MeasurementWriter.WriteAsync(connection, null, commit);
        }

        var expected = commits.SelectMany(c => c).OrderBy(r => r.TimeUs).ThenBy(r => r.Kind).ThenBy(r => r.MessageKey)
            .Select(r => (r.TimeUs, (int)r.Kind, r.MessageKey, r.V0)).ToList();
        var reader = new TrackHistoryReader(schema.DataSource);
        var replay = new List<ReplayMeasurementValues>();
        Assert.Equal(8, await reader.ReadReplayMeasurementsAsync(Fleet, Vehicle, t, t + 700_000_000, 0, 3, replay.Add));
        Assert.Equal(expected, replay.Select(r => (r.TimeUs, (int)r.Kind, r.MessageKey, r.V0)));
        var full = new List<StoredMeasurementValues>();
        await foreach (var s in reader.StreamMeasurementsAsync(Fleet, Vehicle, t, t + 700_000_000, 0, 3))
        {
            full.Add(s);
        }

        Assert.Equal(expected, full.Select(r => (r.TimeUs, (int)r.Kind, r.MessageKey, r.V0)));
        Assert.Equal(5L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurement_chunks"));
    }

    [Fact]
    public async Task Issue4_replay_read_returns_the_row_readers_rows_without_duplicates_in_canonical_order_bit_exact()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day.AddDays(1));
        var t = TestTimes.At(TestTimes.Day, 23, 59, 59, 999_000);
        MeasurementRow[] rows =
        [
            Row(Fleet, Vehicle, 3, t + 500, 8, 0.1, null, null, OutcomeKind.Accepted),
            Row(Fleet, Vehicle, 0, t, 17, 52.520008, 13.404954, 0.1, OutcomeKind.Gated),
            Row(Fleet, Vehicle, 2, t, 3, -0.0, null, null, OutcomeKind.TooLate),
            Row(Fleet, Vehicle, 1, t, 99, double.Epsilon, double.MaxValue, null, OutcomeKind.Pending),
            Row(Fleet, Vehicle, 1, t, 100, 1.0, 2.0, 3.0, OutcomeKind.Duplicate),
            // Across midnight UTC: the next day's partition.
            Row(Fleet, Vehicle, 2, t + 1_000, 4, -1.25e-300, null, null, OutcomeKind.Accepted),
            // Outside the window, another vehicle, another fleet, a kind above the wanted range.
            Row(Fleet, Vehicle, 2, t + 2_000, 5, 9.0, null, null, OutcomeKind.Accepted),
            Row(Fleet, "van-4", 2, t, 6, 9.0, null, null, OutcomeKind.Accepted),
            Row(OtherFleet, Vehicle, 2, t, 7, 9.0, null, null, OutcomeKind.Accepted),
            Row(Fleet, Vehicle, 4, t, 9, 9.0, null, null, OutcomeKind.Accepted),
        ];
        await using (var connection = await schema.OpenAsync())
        {
            await MeasurementWriter.WriteAsync(connection, null, rows);
        }

        var reader = new TrackHistoryReader(schema.DataSource);
        var expected = new List<StoredMeasurementValues>();
        await foreach (var s in reader.StreamMeasurementsAsync(Fleet, Vehicle, t, t + 2_000, 0, 3))
        {
            if (s.Outcome != OutcomeKind.Duplicate)
            {
                expected.Add(s);
            }
        }

        var read = new List<ReplayMeasurementValues>();
        int count = await reader.ReadReplayMeasurementsAsync(Fleet, Vehicle, t, t + 2_000, 0, 3, read.Add);

        // Canonical order (time, kind, key) of the five non-duplicate rows of this vehicle in [t, t + 2 ms).
        Assert.Equal([(t, 0, 17L), (t, 1, 99L), (t, 2, 3L), (t + 500, 3, 8L), (t + 1_000, 2, 4L)], read.Select(r => (r.TimeUs, (int)r.Kind, r.MessageKey)));
        Assert.Equal(read.Count, count);
        Assert.Equal(expected.Count, read.Count);
        for (int i = 0; i < read.Count; i++)
        {
            string at = "row " + i.ToString(System.Globalization.CultureInfo.InvariantCulture) + " ";
            Assert.Equal(expected[i].Kind, read[i].Kind);
            Assert.Equal(expected[i].TimeUs, read[i].TimeUs);
            Assert.Equal(expected[i].MessageKey, read[i].MessageKey);
            AssertBits.Equal(expected[i].V0, read[i].V0, at + "v0");
            AssertBits.Equal(expected[i].V1, read[i].V1, at + "v1");
            AssertBits.Equal(expected[i].V2, read[i].V2, at + "v2");
        }

        // The table is still there and whole.
        var all = await new MeasurementRepository(schema.DataSource).ReadAsync(Fleet, Vehicle, t - 1, t + 10_000);
        Assert.Equal(8, all.Count);
    }

    /// <summary>
    /// Enough rows (about 1.3 MB of COPY data) that rows straddle the decoder's 64 KiB buffer many times; random values
    /// with NULLs in v1 and v2, bit-exact against the row-by-row reader.
    /// </summary>
    [Fact]
    public async Task Issue4_replay_read_decodes_rows_that_straddle_its_buffer_bit_exact()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day.AddDays(1));
        var t = TestTimes.At(TestTimes.Day, 8, 0, 0, 0);
        var random = new Random(4711);
        var rows = new MeasurementRow[20_000];
        for (int i = 0; i < rows.Length; i++)
        {
            double? v1 = i % 3 == 0 ? null : BitConverter.Int64BitsToDouble(random.NextInt64(0, long.MaxValue));
            double? v2 = i % 5 == 0 ? null : random.NextDouble() * 1e6;
            rows[i] = Row(Fleet, Vehicle, (short)(i % 4), t + (i * 50_000L), i, (random.NextDouble() - 0.5) * 1e3, v1, v2, OutcomeKind.Accepted);
        }

        await using (var connection = await schema.OpenAsync())
        {
            await MeasurementWriter.WriteAsync(connection, null, rows);
        }

        var reader = new TrackHistoryReader(schema.DataSource);
        var expected = new List<StoredMeasurementValues>();
        await foreach (var s in reader.StreamMeasurementsAsync(Fleet, Vehicle, t, t + 1_000_000_000L, 0, 3))
        {
            expected.Add(s);
        }

        var read = new List<ReplayMeasurementValues>();
        int count = await reader.ReadReplayMeasurementsAsync(Fleet, Vehicle, t, t + 1_000_000_000L, 0, 3, read.Add);

        Assert.Equal(rows.Length, count);
        Assert.Equal(expected.Count, read.Count);
        for (int i = 0; i < read.Count; i++)
        {
            string at = "row " + i.ToString(System.Globalization.CultureInfo.InvariantCulture) + " ";
            Assert.Equal((expected[i].Kind, expected[i].TimeUs, expected[i].MessageKey), (read[i].Kind, read[i].TimeUs, read[i].MessageKey));
            AssertBits.Equal(expected[i].V0, read[i].V0, at + "v0");
            AssertBits.Equal(expected[i].V1, read[i].V1, at + "v1");
            AssertBits.Equal(expected[i].V2, read[i].V2, at + "v2");
        }
    }

    /// <summary>
    /// Issue 16: the replay read over several connections deals the chunks out and merges them back. Three windows, each
    /// written by an on-time commit; a late commit writes into both sides of the boundary between the first two windows
    /// and a resend into the second, each with a measurement judged a duplicate (so some chunks send their outcomes and
    /// the others do not); the range starts and ends inside a window. Every connection count must hand over exactly the
    /// rows a plain filter and sort of what was written gives, bit for bit.
    /// </summary>
    [Fact]
    public async Task Issue16_replay_read_over_several_connections_hands_over_the_same_rows_in_canonical_order()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        var t = TestTimes.At(TestTimes.Day, 10, 0, 0, 0);
        const long W = 600_000_000;
        var random = new Random(1616);
        long key = 0;
        MeasurementRow At(long timeUs, short kind, OutcomeKind outcome) => Row(
            Fleet, Vehicle, kind, timeUs, ++key, (random.NextDouble() - 0.5) * 1e4,
            kind % 2 == 0 ? null : random.NextDouble(), kind == 3 ? null : -random.NextDouble(), outcome);
        MeasurementRow[] Spread(long startUs, long endUs, int count) =>
            [.. Enumerable.Range(0, count).Select(i => At(startUs + ((endUs - startUs) / count * i), (short)(i % 5), OutcomeKind.Accepted))];

        MeasurementRow[][] commits =
        [
            // On time: one commit per window.
            Spread(t, t + W, 40),
            Spread(t + W, t + (2 * W), 40),
            Spread(t + (2 * W), t + (3 * W), 40),
            // Late: the last seconds of the first window and the first of the second, one judged a duplicate.
            [At(t + W - 3_000_000, 1, OutcomeKind.Accepted), At(t + W - 1, 0, OutcomeKind.Duplicate), At(t + W, 2, OutcomeKind.Accepted),
             At(t + W + 2_000_000, 3, OutcomeKind.Accepted), At(t + W - 1, 2, OutcomeKind.Accepted)],
            // A resend into the second window: a duplicate and one new measurement at an instant already stored.
            [At(t + W + 1_000_000, 1, OutcomeKind.Duplicate), At(t + W + (W / 40), 0, OutcomeKind.Gated)],
        ];
        foreach (var commit in commits)
        {
            await using var connection = await schema.OpenAsync();
            await MeasurementWriter.WriteAsync(connection, null, commit);
        }

        // The premise: some chunks hold a duplicate (their outcomes are sent), others none.
        Assert.Equal(6L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurement_chunks"));
        Assert.Equal(2L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurement_chunks WHERE 3::smallint = ANY (outcome)"));

        long fromUs = t + (W / 2);
        long toUs = t + (2 * W) + (W / 2);
        var expected = commits.SelectMany(c => c)
            .Where(r => r.TimeUs >= fromUs && r.TimeUs < toUs && r.Kind <= 3 && r.Outcome != OutcomeKind.Duplicate)
            .OrderBy(r => r.TimeUs).ThenBy(r => r.Kind).ThenBy(r => r.MessageKey)
            .ToList();
        Assert.Contains(expected, r => r.TimeUs == t + W - 1);
        for (int connections = 1; connections <= 3; connections++)
        {
            var reader = new TrackHistoryReader(schema.DataSource, connections);
            var read = new List<ReplayMeasurementValues>();
            int groups = 0;
            int count = await reader.ReadReplayMeasurementsAsync(
                Fleet, Vehicle, fromUs, toUs, 0, 3, read.Add, _ => { groups++; return ValueTask.CompletedTask; });
            string with = connections.ToString(System.Globalization.CultureInfo.InvariantCulture) + " connection(s), ";
            Assert.Equal(expected.Count, count);
            Assert.Equal(
                expected.Select(r => (r.TimeUs, r.Kind, r.MessageKey)),
                read.Select(r => (r.TimeUs, r.Kind, r.MessageKey)));
            for (int i = 0; i < read.Count; i++)
            {
                string at = with + "row " + i.ToString(System.Globalization.CultureInfo.InvariantCulture) + " ";
                AssertBits.Equal(expected[i].V0, read[i].V0, at + "v0");
                AssertBits.Equal(expected[i].V1, read[i].V1, at + "v1");
                AssertBits.Equal(expected[i].V2, read[i].V2, at + "v2");
            }

            // Every chunk of the range is one group handed over (the window's rows so far, then afterRows).
            Assert.Equal(6, groups);
        }
    }

    [Fact]
    public void Issue16_replay_read_connections_outside_1_to_8_are_refused()
    {
        using var dataSource = Npgsql.NpgsqlDataSource.Create("Host=127.0.0.1");
        Assert.Throws<ArgumentOutOfRangeException>(() => new TrackHistoryReader(dataSource, 0));
        Assert.Throws<ArgumentOutOfRangeException>(() => new TrackHistoryReader(dataSource, 9));
        _ = new TrackHistoryReader(dataSource, 8);
    }

    [Fact]
    public async Task Issue4_replay_read_of_an_empty_window_hands_over_nothing()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var reader = new TrackHistoryReader(schema.DataSource);
        var read = new List<ReplayMeasurementValues>();
        Assert.Equal(0, await reader.ReadReplayMeasurementsAsync(Fleet, Vehicle, 1_000, 1_000, 0, 3, read.Add));
        Assert.Empty(read);
    }

    private static MeasurementRow Row(
        Guid fleet, string vehicle, short kind, long timeUs, long key, double v0, double? v1, double? v2, OutcomeKind outcome) =>
        new(fleet, vehicle, kind, timeUs, key, UnixMicroseconds.ToDateTimeUtc(timeUs + 250_000), v0, v1, v2, 0, outcome, null, false);
}
