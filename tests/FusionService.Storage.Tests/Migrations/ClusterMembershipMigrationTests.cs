// Migration 0008 creates the Orleans membership tables the service's PostgreSQL clustering uses.
using FusionService.Storage.Migrations;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.Migrations;

[Collection(PostgresCollection.Name)]
public sealed class ClusterMembershipMigrationTests(PostgresFixture server)
{
    private const string Member = """
        INSERT INTO cluster_members (cluster_id, silo_address, status, proxy_port, host_name, silo_name, update_zone,
            fault_zone, start_time, i_am_alive_time)
        VALUES ('c1', '127.0.0.1:11111@1', 3, 0, 'h', 's', 0, 0, now(), now())
        """;

    [Fact]
    public async Task A_fresh_database_gets_the_membership_tables_with_one_row_per_silo_and_cluster()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        var applied = await new MigrationRunner(server.ConnectionString, schema.Name).RunAsync();

        Assert.Contains("0008_cluster_membership", applied);
        Assert.Equal(2, await schema.ScalarAsync<long>(
            "SELECT count(*) FROM pg_tables WHERE schemaname = current_schema() AND tablename IN ('cluster_versions', 'cluster_members')"));

        // A member needs its cluster's version row; a silo address appears once per cluster; deleting the cluster
        // (Orleans' DeleteMembershipTableEntries) removes its members.
        var orphan = await Assert.ThrowsAsync<PostgresException>(() => schema.ScalarAsync<int>(Member + "; SELECT 1"));
        Assert.Equal(PostgresErrorCodes.ForeignKeyViolation, orphan.SqlState);
        await schema.ScalarAsync<int>("INSERT INTO cluster_versions (cluster_id, version) VALUES ('c1', 0); " + Member + "; SELECT 1");
        var twice = await Assert.ThrowsAsync<PostgresException>(() => schema.ScalarAsync<int>(Member + "; SELECT 1"));
        Assert.Equal(PostgresErrorCodes.UniqueViolation, twice.SqlState);
        await schema.ScalarAsync<int>("DELETE FROM cluster_versions WHERE cluster_id = 'c1'; SELECT 1");
        Assert.Equal(0, await schema.ScalarAsync<long>("SELECT count(*) FROM cluster_members"));
    }
}
