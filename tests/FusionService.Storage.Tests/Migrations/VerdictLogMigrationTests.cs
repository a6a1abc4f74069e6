// Migration 0005 gives every existing day of measurements a partition of the verdict log.
using FusionService.Storage.Migrations;
using FusionService.Storage.Partitions;
using FusionService.Storage.Tests.Infrastructure;

namespace FusionService.Storage.Tests.Migrations;

[Collection(PostgresCollection.Name)]
public sealed class VerdictLogMigrationTests(PostgresFixture server)
{
    private const string DaysOf = """
        SELECT coalesce(string_agg(substr(c.relname, length(p.relname) + 3), ',' ORDER BY c.relname), '')
        FROM pg_inherits i JOIN pg_class c ON c.oid = i.inhrelid JOIN pg_class p ON p.oid = i.inhparent
        WHERE p.relname = $1 AND p.relnamespace = current_schema()::regnamespace
        """;

    [Fact]
    public async Task Days_partitioned_before_the_migration_get_verdict_partitions_and_later_days_get_both()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        var all = EmbeddedMigrations.Load();
        await new MigrationRunner(server.ConnectionString, schema.Name, null, all.Where(m => string.CompareOrdinal(m.Version, "0005") < 0)).RunAsync();
        await schema.ScalarAsync<int>(
            "CREATE TABLE measurements_p20261130 PARTITION OF measurements FOR VALUES FROM ('2026-11-30 00:00:00+00') TO ('2026-12-01 00:00:00+00'); "
            + "CREATE TABLE measurements_p20261201 PARTITION OF measurements FOR VALUES FROM ('2026-12-01 00:00:00+00') TO ('2026-12-02 00:00:00+00'); "
            + "SELECT 1");

        var applied = await new MigrationRunner(server.ConnectionString, schema.Name, null, all).RunAsync();

        Assert.Contains("0005_verdict_log", applied);
        Assert.Equal("20261130,20261201", await schema.ScalarAsync<string>(DaysOf, "measurements"));
        Assert.Equal("20261130,20261201", await schema.ScalarAsync<string>(DaysOf, "measurement_verdicts"));
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(new DateOnly(2026, 12, 1), new DateOnly(2026, 12, 2));
        Assert.Equal("20261130,20261201,20261202", await schema.ScalarAsync<string>(DaysOf, "measurement_verdicts"));
        Assert.Equal(await schema.ScalarAsync<string>(DaysOf, "measurements"), await schema.ScalarAsync<string>(DaysOf, "measurement_verdicts"));
    }
}
