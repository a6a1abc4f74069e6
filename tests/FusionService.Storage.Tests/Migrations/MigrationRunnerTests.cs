// Migrations: applied once, recorded, safe under concurrency, atomic per file.
using System.Security.Cryptography;
using System.Text;
using FusionService.Storage.Migrations;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.Migrations;

[Collection(PostgresCollection.Name)]
public sealed class MigrationRunnerTests(PostgresFixture server)
{
    private static readonly string[] InitialTables =
        ["alert_rules", "alerts", "api_keys", "cluster_members", "cluster_versions", "data_protection_keys", "duplicate_counts", "filter_checkpoints", "fleets", "fused_states", "measurement_chunks", "schema_migrations", "vehicle_latest_states", "vehicle_receipts", "vehicle_receiver_fits", "vehicles", "webhook_outbox", "webhooks"];

    [Fact]
    public async Task Embedded_migrations_apply_into_the_named_schema_and_are_recorded()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        var runner = new MigrationRunner(server.ConnectionString, schema.Name);

        var applied = await runner.RunAsync();

        Assert.Equal(runner.Versions, applied);
        Assert.Contains("0001_initial", applied);
        await using var connection = await schema.OpenAsync();
        var recorded = await ReadRecordedAsync(connection);
        Assert.Equal(runner.Versions, recorded.Select(r => r.Version));
        Assert.All(recorded, r => Assert.Equal(DateTimeKind.Utc, r.AppliedAt.Kind));

        // The recorded checksum is the SHA-256 (FIPS 180-4) of the embedded file's text.
        var sql = EmbeddedSql("0001_initial");
        Assert.Equal(SHA256.HashData(Encoding.UTF8.GetBytes(sql)), recorded.Single(r => r.Version == "0001_initial").Checksum);

        // Every table landed in the test's schema, none elsewhere.
        var tables = await TablesInAsync(connection, schema.Name);
        Assert.Equal(InitialTables, tables);
    }

    [Fact]
    public async Task Running_again_applies_nothing_and_keeps_the_records()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        var runner = new MigrationRunner(server.ConnectionString, schema.Name);
        await runner.RunAsync();
        await using var connection = await schema.OpenAsync();
        var before = await ReadRecordedAsync(connection);

        var second = await new MigrationRunner(server.ConnectionString, schema.Name).RunAsync();

        Assert.Empty(second);
        var after = await ReadRecordedAsync(connection);
        Assert.Equal(before.Select(r => (r.Version, r.AppliedAt)), after.Select(r => (r.Version, r.AppliedAt)));
    }

    [Fact]
    public async Task Two_concurrent_runners_apply_each_migration_exactly_once()
    {
        await using var schema = await server.NewEmptySchemaAsync();

        // The first migration sleeps so the two runners overlap; without the advisory lock the second would
        // fail on CREATE TABLE of an existing table or on the primary key of schema_migrations.
        Migration[] migrations =
        [
            new("0001_slow", "CREATE TABLE first_table (id int PRIMARY KEY); SELECT pg_sleep(0.5);"),
            new("0002_next", "CREATE TABLE second_table (id int PRIMARY KEY);"),
        ];
        var a = new MigrationRunner(server.ConnectionString, schema.Name, null, migrations);
        var b = new MigrationRunner(server.ConnectionString, schema.Name, null, migrations);

        var results = await Task.WhenAll(Task.Run(() => a.RunAsync()), Task.Run(() => b.RunAsync()));

        var all = results[0].Concat(results[1]).Order(StringComparer.Ordinal).ToArray();
        Assert.Equal(["0001_slow", "0002_next"], all);
        await using var connection = await schema.OpenAsync();
        Assert.Equal(["0001_slow", "0002_next"], (await ReadRecordedAsync(connection)).Select(r => r.Version));
    }

    [Fact]
    public async Task Two_concurrent_runners_of_the_real_migrations_on_a_new_schema_both_succeed()
    {
        await using var schema = await server.NewEmptySchemaAsync();

        var results = await Task.WhenAll(
            Task.Run(() => new MigrationRunner(server.ConnectionString, schema.Name).RunAsync()),
            Task.Run(() => new MigrationRunner(server.ConnectionString, schema.Name).RunAsync()));

        var versions = new MigrationRunner(server.ConnectionString, schema.Name).Versions;
        Assert.Equal(versions, results[0].Concat(results[1]).Order(StringComparer.Ordinal));
        await using var connection = await schema.OpenAsync();
        Assert.Equal(InitialTables, await TablesInAsync(connection, schema.Name));
    }

    [Fact]
    public async Task Migrations_run_in_file_name_order_whatever_order_they_are_given_in()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        Migration[] migrations =
        [
            new("0002_uses_table", "INSERT INTO ordered (step) VALUES (2);"),
            new("0001_makes_table", "CREATE TABLE ordered (step int); INSERT INTO ordered (step) VALUES (1);"),
        ];

        var applied = await new MigrationRunner(server.ConnectionString, schema.Name, null, migrations).RunAsync();

        Assert.Equal(["0001_makes_table", "0002_uses_table"], applied);
        Assert.Equal(2L, await schema.ScalarAsync<long>("SELECT count(*) FROM ordered"));
    }

    [Fact]
    public async Task A_failing_migration_is_rolled_back_whole_and_not_recorded()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        Migration[] migrations =
        [
            new("0001_good", "CREATE TABLE good_table (id int);"),
            new("0002_bad", "CREATE TABLE half_done (id int); SELECT 1 / 0;"),
            new("0003_never", "CREATE TABLE never_made (id int);"),
        ];

        var error = await Assert.ThrowsAsync<PostgresException>(
            () => new MigrationRunner(server.ConnectionString, schema.Name, null, migrations).RunAsync());

        Assert.Equal(PostgresErrorCodes.DivisionByZero, error.SqlState);
        await using var connection = await schema.OpenAsync();
        Assert.Equal(["0001_good"], (await ReadRecordedAsync(connection)).Select(r => r.Version));
        Assert.Equal(["good_table", "schema_migrations"], await TablesInAsync(connection, schema.Name));
    }

    [Fact]
    public async Task An_applied_migration_whose_text_changed_is_refused()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        await new MigrationRunner(server.ConnectionString, schema.Name, null, [new("0001_a", "CREATE TABLE a (id int);")]).RunAsync();

        var edited = new MigrationRunner(server.ConnectionString, schema.Name, null, [new("0001_a", "CREATE TABLE a (id bigint);")]);

        var error = await Assert.ThrowsAsync<InvalidOperationException>(() => edited.RunAsync());
        Assert.Contains("0001_a", error.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Embedded_sql_names_no_schema()
    {
        // Schema-relative SQL is what lets every test (and installation) use its own schema.
        foreach (var version in new MigrationRunner("Host=unused", "t_lint").Versions)
        {
            Assert.DoesNotContain("public.", EmbeddedSql(version), StringComparison.OrdinalIgnoreCase);
        }
    }

    [Fact]
    public void Schema_names_that_are_not_plain_identifiers_are_refused()
    {
        Assert.Throws<ArgumentException>(() => new MigrationRunner("Host=unused", "Robert\"; DROP TABLE x; --"));
        Assert.Throws<ArgumentException>(() => new MigrationRunner("Host=unused", "pg_catalog"));
        Assert.Throws<ArgumentException>(() => new MigrationRunner("Host=unused", "UpperCase"));
    }

    private static string EmbeddedSql(string version)
    {
        var assembly = typeof(MigrationRunner).Assembly;
        using var stream = assembly.GetManifestResourceStream("FusionService.Storage.Migrations.Sql." + version + ".sql")!;
        using var reader = new StreamReader(stream);
        return reader.ReadToEnd();
    }

    private static async Task<List<(string Version, DateTime AppliedAt, byte[] Checksum)>> ReadRecordedAsync(NpgsqlConnection connection)
    {
        await using var command = new NpgsqlCommand("SELECT version, applied_at, checksum FROM schema_migrations ORDER BY version", connection);
        await using var reader = await command.ExecuteReaderAsync();
        var rows = new List<(string, DateTime, byte[])>();
        while (await reader.ReadAsync())
        {
            rows.Add((reader.GetString(0), reader.GetDateTime(1), (byte[])reader.GetValue(2)));
        }

        return rows;
    }

    private static async Task<List<string>> TablesInAsync(NpgsqlConnection connection, string schema)
    {
        await using var command = new NpgsqlCommand(
            "SELECT c.relname FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace "
            + "WHERE n.nspname = $1 AND c.relkind IN ('r', 'p') AND NOT c.relispartition ORDER BY c.relname COLLATE \"C\"",
            connection);
        command.Parameters.Add(new NpgsqlParameter { Value = schema });
        await using var reader = await command.ExecuteReaderAsync();
        var names = new List<string>();
        while (await reader.ReadAsync())
        {
            names.Add(reader.GetString(0));
        }

        return names;
    }
}
