// Migration 0013 moves stored measurements and their newest verdicts into chunks without changing what is read.
using FusionService.Storage.Migrations;
using FusionService.Storage.Partitions;
using FusionService.Storage.Tests.Infrastructure;

namespace FusionService.Storage.Tests.Migrations;

[Collection(PostgresCollection.Name)]
public sealed class ChunkMigrationTests(PostgresFixture server)
{
    private const string DaysOf = """
        SELECT coalesce(string_agg(substr(c.relname, length(p.relname) + 3), ',' ORDER BY c.relname), '')
        FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid JOIN pg_class p ON p.oid = i.inhparent
        WHERE p.relname = $1 AND p.relnamespace = current_schema()::regnamespace
        """;

    // Every column judged_measurements(...) returns, as text, for two vehicles over both days; the same text before and
    // after the migration means the same values to the bit (float8 text output is exact: shortest round-trip digits,
    // PostgreSQL 15 manual, section 8.1.3, extra_float_digits default 1).
    private const string JudgedText = """
        SELECT string_agg(concat_ws('|', j.vehicle_id, j.kind, j.time_us, j.measured_at, j.message_key, j.received_at,
                                    j.v0, j.v1, j.v2, j.flags, j.outcome, j.nis, j.track_reset, j.w0, j.w1), E'\n'
                          ORDER BY j.vehicle_id, j.time_us, j.kind, j.message_key)
        FROM (VALUES ('van-a'), ('van-b')) AS v(id)
        CROSS JOIN LATERAL judged_measurements('0195a0c1-0000-7000-8000-0000000000c1', v.id, 1764460800000000, 1764633600000000,
                                               '2025-11-30 00:00:00+00', '2025-12-02 00:00:00+00') j
        """;

    private const string OldRows = """
        SET TIME ZONE 'UTC';
        INSERT INTO fleets (fleet_id, name) VALUES ('0195a0c1-0000-7000-8000-0000000000c1', 'migration');
        CREATE TABLE measurements_p20251130 PARTITION OF measurements FOR VALUES FROM ('2025-11-30 00:00:00+00') TO ('2025-12-01 00:00:00+00');
        CREATE TABLE measurements_p20251201 PARTITION OF measurements FOR VALUES FROM ('2025-12-01 00:00:00+00') TO ('2025-12-02 00:00:00+00');
        CREATE TABLE measurement_verdicts_p20251130 PARTITION OF measurement_verdicts FOR VALUES FROM ('2025-11-30 00:00:00+00') TO ('2025-12-01 00:00:00+00');
        CREATE TABLE measurement_verdicts_p20251201 PARTITION OF measurement_verdicts FOR VALUES FROM ('2025-12-01 00:00:00+00') TO ('2025-12-02 00:00:00+00');
        INSERT INTO measurements (fleet_id, vehicle_id, kind, time_us, measured_at, message_key, received_at, v0, v1, v2, flags, outcome, nis, track_reset)
        SELECT '0195a0c1-0000-7000-8000-0000000000c1', r.vehicle, r.kind, r.t, timestamptz 'epoch' + r.t * interval '1 microsecond', r.k,
               timestamptz '2025-12-01 09:00:00.123456+00', r.v0, r.v1, r.v2, r.flags, r.outcome, r.nis, r.reset
        FROM (VALUES
            ('van-a', 0::smallint, 1764548400000000, 11::bigint, 46.1234567890123, 8.47654321, 3.5::float8, 0, 4::smallint, NULL::float8, false),
            ('van-a', 2::smallint, 1764548400000000, 12::bigint, 7.25, NULL, NULL, 0, 4::smallint, NULL, false),
            ('van-a', 3::smallint, 1764548400100000, 13::bigint, -0.015625, 0.3, NULL, 1, 4::smallint, NULL, false),
            ('van-a', 2::smallint, 1764549000000000, 14::bigint, 7.5, NULL, NULL, 0, 1::smallint, 9.75::float8, false),
            ('van-a', 2::smallint, 1764547199999999, 15::bigint, 1e-300, NULL, NULL, 0, 4::smallint, NULL, false),
            ('van-b', 2::smallint, 1764548400000000, 11::bigint, 2.0, NULL, NULL, 0, 4::smallint, NULL, false)
        ) AS r(vehicle, kind, t, k, v0, v1, v2, flags, outcome, nis, reset);
        INSERT INTO measurement_verdicts (fleet_id, vehicle_id, kind, time_us, message_key, measured_at, outcome, nis, track_reset, w0, w1)
        SELECT '0195a0c1-0000-7000-8000-0000000000c1', r.vehicle, r.kind, r.t, r.k, timestamptz 'epoch' + r.t * interval '1 microsecond',
               r.outcome, r.nis, r.reset, r.w0, r.w1
        FROM (VALUES
            ('van-a', 0::smallint, 1764548400000000, 11::bigint, 1::smallint, 30.5::float8, false, 2.5::real, -3.25::real),
            ('van-a', 0::smallint, 1764548400000000, 11::bigint, 0::smallint, 0.8125::float8, true, 0.5::real, -0.25::real),
            ('van-a', 2::smallint, 1764548400000000, 12::bigint, 5::smallint, NULL, false, NULL, NULL),
            ('van-b', 2::smallint, 1764548400000000, 11::bigint, 8::smallint, NULL, false, NULL, NULL)
        ) AS r(vehicle, kind, t, k, outcome, nis, reset, w0, w1);
        SELECT 1
        """;

    [Fact]
    public async Task Measurements_and_their_newest_verdicts_read_the_same_after_the_move_into_chunks()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        var all = EmbeddedMigrations.Load();
        await new MigrationRunner(server.ConnectionString, schema.Name, null, all.Where(m => string.CompareOrdinal(m.Version, "0013") < 0)).RunAsync();
        await schema.ScalarAsync<int>(OldRows);
        string before = await schema.ScalarAsync<string>(JudgedText);

        var applied = await new MigrationRunner(server.ConnectionString, schema.Name, null, all).RunAsync();

        Assert.Contains("0013_measurement_chunks", applied);
        Assert.Equal(6, before.Split('\n').Length);
        Assert.Equal(before, await schema.ScalarAsync<string>(JudgedText));
        // van-a: 00:20:00.0-00:20:00.1 one window, 00:30:00 the next, 23:59:59.999999 of the day before another; van-b one.
        Assert.Equal(
            "van-a 1764547199999999 1 | van-a 1764548400000000 3 | van-a 1764549000000000 1 | van-b 1764548400000000 1",
            await schema.ScalarAsync<string>(
                "SELECT string_agg(vehicle_id || ' ' || first_us || ' ' || count, ' | ' ORDER BY vehicle_id, first_us) FROM measurement_chunks"));
        Assert.Equal("20251130,20251201", await schema.ScalarAsync<string>(DaysOf, "measurement_chunks"));
        Assert.Equal("measurement_chunks_p20251130", await schema.ScalarAsync<string>(
            "SELECT tableoid::regclass::text FROM measurement_chunks WHERE first_us = 1764547199999999"));
        Assert.Equal("", await schema.ScalarAsync<string>(
            "SELECT concat(to_regclass('measurement_verdicts')::text, to_regclass('measurements_p20251130')::text)"));
        Assert.Equal("{toast_tuple_target=128}", await schema.ScalarAsync<string>(
            "SELECT reloptions::text FROM pg_class WHERE oid = 'measurement_chunks_p20251130'::regclass"));

        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(new DateOnly(2025, 12, 1), new DateOnly(2025, 12, 2));
        Assert.Equal("20251130,20251201,20251202", await schema.ScalarAsync<string>(DaysOf, "measurement_chunks"));
    }
}
