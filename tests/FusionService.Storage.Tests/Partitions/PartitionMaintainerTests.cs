// Daily partitions: window created ahead, idempotent, retention drops old days with their rows.
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using FusionService.Storage.Partitions;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.Partitions;

[Collection(PostgresCollection.Name)]
public sealed class PartitionMaintainerTests(PostgresFixture server)
{
    private static readonly PartitionMaintenanceOptions Window = new() { DaysBack = 2, DaysAhead = 3, RetentionDays = 4 };

    [Fact]
    public async Task Run_creates_days_back_through_days_ahead_for_every_partitioned_table_once()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var maintainer = new PartitionMaintainer(schema.DataSource, Window);
        var today = new DateOnly(2025, 3, 10);

        var first = await maintainer.RunAsync(today);
        var second = await maintainer.RunAsync(today);

        var expectedDays = Days(new DateOnly(2025, 3, 8), new DateOnly(2025, 3, 13));
        Assert.Equal(
            PartitionMaintainer.PartitionedTables.SelectMany(table => expectedDays.Select(d => PartitionMaintainer.PartitionName(table, d))),
            first.Created);
        Assert.Contains("measurement_chunks_p20250308", first.Created);
        Assert.Empty(first.Dropped);
        Assert.Empty(second.Created);
        Assert.Empty(second.Dropped);
        foreach (var table in PartitionMaintainer.PartitionedTables)
        {
            Assert.Equal(expectedDays, await maintainer.PartitionDaysAsync(table));
        }

        // The chunk partitions move their arrays out of the row past 128 bytes (a verdict update then copies pointers,
        // not arrays); fused states keep the defaults.
        Assert.Equal(
            "fused_states_p20250308: - | measurement_chunks_p20250308: {toast_tuple_target=128}",
            await schema.ScalarAsync<string>(
                "SELECT string_agg(relname || ': ' || coalesce(reloptions::text, '-'), ' | ' ORDER BY relname) FROM pg_class "
                + "WHERE relname LIKE '%\\_p20250308' AND relkind = 'r' AND relnamespace = current_schema()::regnamespace"));
    }

    [Fact]
    public async Task Chunk_partitions_compress_their_arrays_with_lz4_where_the_server_has_it()
    {
        // Migration 0013 sets lz4 on the parent's array columns; partitions made later must take it over (attcompression
        // 'l' = lz4, 'p' = pglz, '' = the server default; PostgreSQL 15 manual, pg_attribute).
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(new DateOnly(2025, 4, 1), new DateOnly(2025, 4, 1));
        bool lz4 = await schema.ScalarAsync<bool>(
            "SELECT EXISTS (SELECT 1 FROM pg_settings WHERE name = 'default_toast_compression' AND 'lz4' = ANY (enumvals))");
        string compression = await schema.ScalarAsync<string>(
            "SELECT string_agg(DISTINCT attcompression::text, ',') FROM pg_attribute "
            + "WHERE attrelid = 'measurement_chunks_p20250401'::regclass AND attname IN ('time_us', 'message_key', 'v0', 'nis', 'outcome')");
        Assert.Equal(lz4 ? "l" : string.Empty, compression);
    }

    [Fact]
    public async Task Partition_bounds_are_whole_utc_days()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(new DateOnly(2024, 2, 29), new DateOnly(2024, 2, 29));
        await using var connection = await schema.OpenAsync();
        await using (var utc = new NpgsqlCommand("SET TIME ZONE 'UTC'", connection))
        {
            await utc.ExecuteNonQueryAsync();
        }

        await using var command = new NpgsqlCommand(
            "SELECT pg_get_expr(c.relpartbound, c.oid) FROM pg_class c WHERE c.oid = to_regclass('measurement_chunks_p20240229')", connection);
        var bound = (string?)await command.ExecuteScalarAsync();

        // 2024 is a leap year (Gregorian rule), so 29 February is followed by 1 March; the bounds are Unix microseconds
        // (POSIX time: 86,400 s a day, so 2024-02-29T00:00Z is 19,782 days after the epoch, 1,709,164,800 s).
        Assert.Equal("FOR VALUES FROM ('1709164800000000') TO ('1709251200000000')", bound);
    }

    [Fact]
    public async Task Retention_drops_partitions_of_older_days_with_their_rows_and_keeps_the_rest()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var clock = new FixedClock(new DateTimeOffset(2025, 3, 10, 23, 59, 59, TimeSpan.Zero));
        var maintainer = new PartitionMaintainer(schema.DataSource, Window, clock);
        await maintainer.RunAsync(); // today = 2025-03-10 from the clock: partitions 03-08 .. 03-13
        await using (var connection = await schema.OpenAsync())
        {
            await MeasurementWriter.WriteAsync(connection, null,
            [
                Measurement(TestTimes.At(new DateOnly(2025, 3, 8), 23, 59, 59, 999_999)),
                Measurement(TestTimes.At(new DateOnly(2025, 3, 9), 0, 0, 0, 0)),
                Measurement(TestTimes.At(new DateOnly(2025, 3, 10), 0, 0, 0, 0)),
            ]);
            await FusedStateWriter.WriteAsync(connection, null, [FusedState(TestTimes.At(new DateOnly(2025, 3, 8), 12, 0, 0, 0))]);
        }

        // Four days later, retention 4 days: today 03-14 keeps 03-10 .. 03-14 and drops 03-08 and 03-09.
        clock.Now = new DateTimeOffset(2025, 3, 14, 0, 0, 0, TimeSpan.Zero);
        var result = await maintainer.RunAsync();

        Assert.Equal(
            ["measurement_chunks_p20250308", "measurement_chunks_p20250309", "fused_states_p20250308", "fused_states_p20250309"],
            result.Dropped);
        Assert.Equal(
            ["measurement_chunks_p20250314", "measurement_chunks_p20250315", "measurement_chunks_p20250316", "measurement_chunks_p20250317",
             "fused_states_p20250314", "fused_states_p20250315", "fused_states_p20250316", "fused_states_p20250317"],
            result.Created);
        Assert.Equal(Days(new DateOnly(2025, 3, 10), new DateOnly(2025, 3, 17)), await maintainer.PartitionDaysAsync("measurement_chunks"));
        Assert.Equal(
            TestTimes.At(new DateOnly(2025, 3, 10), 0, 0, 0, 0),
            await schema.ScalarAsync<long>("SELECT time_us FROM measurements"));
        Assert.Equal(1L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements"));
        Assert.Equal(0L, await schema.ScalarAsync<long>("SELECT count(*) FROM fused_states"));
    }

    [Fact]
    public async Task Retention_keeps_the_oldest_kept_day_and_leaves_foreign_partitions_alone()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var maintainer = new PartitionMaintainer(schema.DataSource, Window);
        await maintainer.EnsurePartitionsAsync(new DateOnly(2025, 1, 1), new DateOnly(2025, 1, 3));
        await using (var connection = await schema.OpenAsync())
        {
            // A partition someone made by hand, not named by the maintainer's pattern.
            await using var manual = new NpgsqlCommand(
                "CREATE TABLE measurement_chunks_archive PARTITION OF measurement_chunks "
                + "FOR VALUES FROM (1704067200000000) TO (1706745600000000)", connection);
            await manual.ExecuteNonQueryAsync();
            await MeasurementWriter.WriteAsync(connection, null, [Measurement(TestTimes.At(new DateOnly(2025, 1, 2), 8, 0, 0, 0))]);
        }

        var dropped = await maintainer.DropPartitionsBeforeAsync(new DateOnly(2025, 1, 2));

        Assert.Equal(["measurement_chunks_p20250101", "fused_states_p20250101"], dropped);
        Assert.Equal([new DateOnly(2025, 1, 2), new DateOnly(2025, 1, 3)], await maintainer.PartitionDaysAsync("measurement_chunks"));
        Assert.Equal(1L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements"));
        Assert.Equal("measurement_chunks_archive", await schema.ScalarAsync<string>("SELECT to_regclass('measurement_chunks_archive')::text"));
    }

    [Fact]
    public async Task Two_maintainers_at_once_create_each_partition_once()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var a = new PartitionMaintainer(schema.DataSource, Window);
        var b = new PartitionMaintainer(schema.DataSource, Window);
        var today = new DateOnly(2025, 6, 1);

        var results = await Task.WhenAll(Task.Run(() => a.RunAsync(today)), Task.Run(() => b.RunAsync(today)));

        var created = results[0].Created.Concat(results[1].Created).ToArray();
        Assert.Equal(created.Length, created.Distinct(StringComparer.Ordinal).Count());
        // Six days (two back, today, three ahead) of each partitioned table.
        Assert.Equal(6 * PartitionMaintainer.PartitionedTables.Count, created.Length);
    }

    [Fact]
    public void A_window_reaching_past_the_retention_is_refused()
    {
        using var dataSource = NpgsqlDataSource.Create("Host=unused");
        Assert.Throws<ArgumentOutOfRangeException>(
            () => new PartitionMaintainer(dataSource, new PartitionMaintenanceOptions { DaysBack = 5, RetentionDays = 4 }));
    }

    private static DateOnly[] Days(DateOnly first, DateOnly last) =>
        Enumerable.Range(0, last.DayNumber - first.DayNumber + 1).Select(first.AddDays).ToArray();

    private static MeasurementRow Measurement(long timeUs) => new(
        Guid.Parse("0195a0c1-0000-7000-8000-0000000000a1"), "van-1", 0, timeUs, 1, UnixMicroseconds.ToDateTimeUtc(timeUs),
        1, 2, null, 0, OutcomeKind.Accepted, null, false);

    private static FusedStateRow FusedState(long timeUs) => new(
        Guid.Parse("0195a0c1-0000-7000-8000-0000000000a1"), "van-1", timeUs, 50, 8, 0, 0, 0, 0, 0, 1, new double[36], 1, 1, 0);

    private sealed class FixedClock(DateTimeOffset now) : TimeProvider
    {
        public DateTimeOffset Now { get; set; } = now;

        public override DateTimeOffset GetUtcNow() => Now;
    }
}
