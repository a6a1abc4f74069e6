// One PostgreSQL server for the whole test run: a throwaway embedded cluster, or FUSION_TEST_PG.
using FusionService.Storage.Cluster;
using FusionService.Storage.Migrations;
using Npgsql;

namespace FusionService.Storage.Tests.Infrastructure;

/// <summary>
/// Provides the server every storage test class in <see cref="PostgresCollection"/> shares: the server named by
/// the connection string in environment variable <c>FUSION_TEST_PG</c>, or else a throwaway embedded cluster
/// started once and stopped (and deleted) when the run ends. A server that cannot be started or reached fails
/// every test of the collection; nothing is skipped.
/// </summary>
public sealed class PostgresFixture : IAsyncLifetime
{
    /// <summary>Name of the environment variable that points the tests at an existing server.</summary>
    public const string ExternalServerVariable = "FUSION_TEST_PG";

    private EmbeddedPostgres? _cluster;

    /// <summary>Connection string of the shared server's test database.</summary>
    public string ConnectionString { get; private set; } = string.Empty;

    /// <summary>True when the tests run on the embedded throwaway cluster.</summary>
    public bool Embedded => _cluster is not null;

    /// <inheritdoc />
    public async Task InitializeAsync()
    {
        var external = Environment.GetEnvironmentVariable(ExternalServerVariable);
        if (!string.IsNullOrWhiteSpace(external))
        {
            ConnectionString = external;
        }
        else
        {
            _cluster = await EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions { NoSync = true });
            ConnectionString = _cluster.ConnectionString;
        }

        // Fail here, loudly, when the server cannot be reached.
        await using var connection = new NpgsqlConnection(ConnectionString);
        await connection.OpenAsync();
    }

    /// <inheritdoc />
    public async Task DisposeAsync()
    {
        NpgsqlConnection.ClearAllPools();
        if (_cluster is not null)
        {
            await _cluster.DisposeAsync();
        }
    }

    /// <summary>A fresh schema with every migration applied; drop it by disposing the result.</summary>
    public async Task<TestSchema> NewMigratedSchemaAsync()
    {
        var schema = await NewEmptySchemaAsync();
        await new MigrationRunner(ConnectionString, schema.Name).RunAsync();
        return schema;
    }

    /// <summary>A fresh, not yet created schema name with its connection string; dropped on dispose.</summary>
    public Task<TestSchema> NewEmptySchemaAsync() => Task.FromResult(new TestSchema(ConnectionString));
}
