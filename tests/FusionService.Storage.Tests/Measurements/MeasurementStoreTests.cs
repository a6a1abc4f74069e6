// Measurements: binary COPY in, Dapper out, exact values, NULLs, partitions, atomicity.
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Measurements;
using FusionService.Storage.Partitions;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.Measurements;

[Collection(PostgresCollection.Name)]
public sealed class MeasurementStoreTests(PostgresFixture server)
{
    private static readonly Guid Fleet = Guid.Parse("0195a0c1-0000-7000-8000-000000000001");

    [Fact]
    public async Task Copy_round_trip_keeps_every_value_null_and_microsecond()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day.AddDays(1));
        var rows = SampleRows();

        await using (var connection = await schema.OpenAsync())
        {
            Assert.Equal((ulong)rows.Length, await MeasurementWriter.WriteAsync(connection, null, rows));
        }

        var read = await new MeasurementRepository(schema.DataSource).ReadAsync(
            Fleet, "van-1", TestTimes.DayStartUs, TestTimes.DayStartUs + (2 * 86_400_000_000L));

        var expected = rows.OrderBy(r => r.TimeUs).ThenBy(r => r.Kind).ThenBy(r => r.MessageKey).ToArray();
        Assert.Equal(expected.Length, read.Count);
        for (var i = 0; i < expected.Length; i++)
        {
            AssertSameRow(expected[i], read[i], i);
        }
    }

    [Fact]
    public async Task Measured_at_is_the_same_instant_as_time_us_and_the_chunk_picks_the_utc_day_partition()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day.AddDays(1));
        var lastOfDay = TestTimes.At(TestTimes.Day, 23, 59, 59, 999_999);
        var firstOfNext = TestTimes.At(TestTimes.Day.AddDays(1), 0, 0, 0, 0);
        await using var connection = await schema.OpenAsync();
        await MeasurementWriter.WriteAsync(connection, null, [Row(lastOfDay, 1), Row(firstOfNext, 2)]);

        await using (var utc = new NpgsqlCommand("SET TIME ZONE 'UTC'", connection))
        {
            await utc.ExecuteNonQueryAsync();
        }

        await using var command = new NpgsqlCommand(
            "SELECT m.time_us, to_char(m.measured_at, 'YYYY-MM-DD HH24:MI:SS.US'), c.tableoid::regclass::text "
            + "FROM measurements m JOIN measurement_chunks c ON c.first_us = m.time_us ORDER BY m.time_us", connection);
        await using var reader = await command.ExecuteReaderAsync();
        var seen = new List<(long, string, string)>();
        while (await reader.ReadAsync())
        {
            seen.Add((reader.GetInt64(0), reader.GetString(1), reader.GetString(2)));
        }

        // PostgreSQL stores timestamptz with microsecond resolution (PostgreSQL 15 manual, section 8.5, published),
        // so the last microsecond of the day is still that day; the two instants lie in different ten-minute windows,
        // so each is a chunk of its own, in the partition of its own day.
        Assert.Equal(
            [
                (lastOfDay, "2025-03-08 23:59:59.999999", "measurement_chunks_p20250308"),
                (firstOfNext, "2025-03-09 00:00:00.000000", "measurement_chunks_p20250309"),
            ],
            seen);
    }

    [Fact]
    public async Task Reads_are_half_open_in_time_and_limited_to_one_vehicle_of_one_fleet()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        var t0 = TestTimes.At(TestTimes.Day, 8, 0, 0, 0);
        await using (var connection = await schema.OpenAsync())
        {
            await MeasurementWriter.WriteAsync(connection, null,
            [
                Row(t0, 1),
                Row(t0 + 1_000_000, 2),
                Row(t0 + 2_000_000, 3),
                Row(t0 + 1_000_000, 4) with { VehicleId = "van-2" },
                Row(t0 + 1_000_000, 5) with { FleetId = Guid.Parse("0195a0c1-0000-7000-8000-000000000002") },
            ]);
        }

        var read = await new MeasurementRepository(schema.DataSource).ReadAsync(Fleet, "van-1", t0, t0 + 2_000_000);

        Assert.Equal([1L, 2L], read.Select(r => r.MessageKey));
        Assert.Empty(await new MeasurementRepository(schema.DataSource).ReadAsync(Fleet, "van-1", t0, t0));
    }

    [Fact]
    public async Task A_batch_with_a_repeated_key_stores_nothing()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        var t = TestTimes.At(TestTimes.Day, 9, 0, 0, 0);
        await using var connection = await schema.OpenAsync();

        var error = await Assert.ThrowsAsync<ArgumentException>(
            () => MeasurementWriter.WriteAsync(connection, null, [Row(t, 1), Row(t + 1, 2), Row(t, 1)]));

        Assert.StartsWith("Row 2: the same key as row 0", error.Message, StringComparison.Ordinal);
        Assert.Equal(0L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements"));
    }

    [Fact]
    public async Task A_row_for_a_day_without_partition_is_refused_and_the_batch_stores_nothing()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        await using var connection = await schema.OpenAsync();
        var inside = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);
        var outside = TestTimes.At(TestTimes.Day.AddDays(5), 12, 0, 0, 0);

        var error = await Assert.ThrowsAsync<PostgresException>(
            () => MeasurementWriter.WriteAsync(connection, null, [Row(inside, 1), Row(outside, 2)]));

        Assert.Equal(PostgresErrorCodes.CheckViolation, error.SqlState);
        Assert.Contains("no partition", error.MessageText, StringComparison.Ordinal);
        Assert.Equal(0L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements"));
    }

    [Fact]
    public async Task Copy_joins_the_callers_transaction()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        await using var connection = await schema.OpenAsync();
        var t = TestTimes.At(TestTimes.Day, 10, 0, 0, 0);

        await using (var rolledBack = await connection.BeginTransactionAsync())
        {
            await MeasurementWriter.WriteAsync(connection, rolledBack, [Row(t, 1)]);
            await rolledBack.RollbackAsync();
        }

        await using (var committed = await connection.BeginTransactionAsync())
        {
            await MeasurementWriter.WriteAsync(connection, committed, [Row(t, 2)]);
            await committed.CommitAsync();
        }

        var read = await new MeasurementRepository(schema.DataSource).ReadAsync(Fleet, "van-1", t, t + 1);
        Assert.Equal([2L], read.Select(r => r.MessageKey));
    }

    [Fact]
    public async Task Bad_rows_are_refused_before_any_data_is_sent()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await using var connection = await schema.OpenAsync();
        var t = TestTimes.At(TestTimes.Day, 10, 0, 0, 0);
        var local = Row(t, 1) with { ReceivedAtUtc = new DateTime(2025, 3, 8, 10, 0, 0, DateTimeKind.Local) };

        var error = await Assert.ThrowsAsync<ArgumentException>(() => MeasurementWriter.WriteAsync(connection, null, [Row(t, 0), local]));

        Assert.Contains("Row 1", error.Message, StringComparison.Ordinal);
        await Assert.ThrowsAsync<ArgumentException>(
            () => MeasurementWriter.WriteAsync(connection, null, [Row(t, 1) with { VehicleId = "" }]));
        Assert.Equal(0UL, await MeasurementWriter.WriteAsync(connection, null, []));
    }

    private static MeasurementRow Row(long timeUs, long key) => new(
        Fleet, "van-1", 1, timeUs, key, UnixMicroseconds.ToDateTimeUtc(timeUs + 250_000), 1.0, null, null, 0,
        OutcomeKind.Accepted, null, false);

    private static MeasurementRow[] SampleRows()
    {
        var t = TestTimes.At(TestTimes.Day, 14, 3, 7, 123_457);
        return
        [
            // Three values, every optional present; 0.1 is not exactly representable in binary, so only a
            // bit-exact binary transfer returns it unchanged.
            new(Fleet, "van-1", 0, t, 17, UnixMicroseconds.ToDateTimeUtc(t + 1_500_001), 52.520008, 13.404954, 0.1,
                0x5, OutcomeKind.Accepted, 0.37, false),
            // Same instant, other kind, smaller key: ordering is time, then kind, then key.
            new(Fleet, "van-1", 2, t, 3, UnixMicroseconds.ToDateTimeUtc(t + 2), -0.0, null, null,
                0, OutcomeKind.Pending, null, true),
            new(Fleet, "van-1", 1, t, 99, UnixMicroseconds.ToDateTimeUtc(t + 3), double.Epsilon, double.MaxValue, null,
                int.MinValue, OutcomeKind.Gated, 1e300, false),
            // Earlier in time, written last: the read must sort it first.
            new(Fleet, "van-1", 1, t - 1, long.MinValue, UnixMicroseconds.ToDateTimeUtc(t), -1.25e-300, -7.5, 1e-9,
                int.MaxValue, OutcomeKind.TooLate, 0.0, false),
            new(Fleet, "van-1", short.MaxValue, t + 1, long.MaxValue, UnixMicroseconds.ToDateTimeUtc(t + 86_400_000_000L), 3.0, 4.0, 5.0,
                0, OutcomeKind.Duplicate, null, false),
            // Next UTC day, first microsecond.
            new(Fleet, "van-1", 0, TestTimes.At(TestTimes.Day.AddDays(1), 0, 0, 0, 0), 1, UnixMicroseconds.ToDateTimeUtc(t), 1, 2, 3,
                0, OutcomeKind.Accepted, 2.5, false),
        ];
    }

    private static void AssertSameRow(MeasurementRow expected, MeasurementRow actual, int index)
    {
        var at = "row " + index.ToString(System.Globalization.CultureInfo.InvariantCulture) + " ";
        Assert.Equal(expected.FleetId, actual.FleetId);
        Assert.Equal(expected.VehicleId, actual.VehicleId);
        Assert.Equal(expected.Kind, actual.Kind);
        Assert.Equal(expected.TimeUs, actual.TimeUs);
        Assert.Equal(expected.MessageKey, actual.MessageKey);
        Assert.Equal(DateTimeKind.Utc, actual.ReceivedAtUtc.Kind);
        Assert.Equal(expected.ReceivedAtUtc.Ticks, actual.ReceivedAtUtc.Ticks);
        AssertBits.Equal(expected.V0, actual.V0, at + "v0");
        AssertBits.Equal(expected.V1, actual.V1, at + "v1");
        AssertBits.Equal(expected.V2, actual.V2, at + "v2");
        Assert.Equal(expected.Flags, actual.Flags);
        Assert.Equal(expected.Outcome, actual.Outcome);
        AssertBits.Equal(expected.Nis, actual.Nis, at + "nis");
        Assert.Equal(expected.TrackReset, actual.TrackReset);
    }
}
