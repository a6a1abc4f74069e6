// One PostgreSQL server (throwaway embedded cluster, restartable) and one service host for the test run.
using System.Globalization;
using System.Net.Http.Headers;
using System.Security.Cryptography;
using FusionService.Storage.Cluster;
using FusionService.Storage.Fleets;
using FusionService.Storage.Measurements;
using FusionService.Storage.Schemas;
using Npgsql;

namespace FusionService.Tests.Infrastructure;

/// <summary>
/// Starts a throwaway embedded PostgreSQL cluster once per test run (on a fixed port, so it can be stopped and
/// started again by the outage test) and a shared service host on it. A server that cannot be started fails every
/// test; nothing is skipped.
/// </summary>
public sealed class ServiceFixture : IAsyncLifetime
{
    private readonly string _dataDirectory = Path.Combine(Path.GetTempPath(), "fusion-service-tests-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(6)));
    private readonly int _port = FreePort.Next();
    private EmbeddedPostgres? _cluster;

    /// <summary>Data folder of the running cluster.</summary>
    public string DataDirectory => _dataDirectory;

    /// <summary>Server connection string.</summary>
    public string ConnectionString { get; private set; } = string.Empty;

    /// <summary>The shared service host.</summary>
    public ServiceFactory Host { get; private set; } = null!;

    /// <summary>Data source on the service's schema.</summary>
    public NpgsqlDataSource Store { get; private set; } = null!;

    /// <inheritdoc />
    public async Task InitializeAsync()
    {
        await StartServerAsync();
        Host = new ServiceFactory(ConnectionString);
        Host.CreateClient().Dispose();
        Store = NpgsqlDataSource.Create(StorageSchema.WithSearchPath(ConnectionString, "fusion"));
    }

    /// <summary>Starts (or restarts) the cluster on its fixed port and data folder.</summary>
    public async Task StartServerAsync()
    {
        _cluster = await EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions
        {
            DataDirectory = _dataDirectory,
            DeleteDataDirectoryOnDispose = false,
            NoSync = true,
            Port = _port,
        });
        ConnectionString = _cluster.ConnectionString;
        (Store as NpgsqlDataSource)?.Clear();
        await using var connection = new NpgsqlConnection(ConnectionString);
        await connection.OpenAsync();
    }

    /// <summary>Stops the cluster (the data stays).</summary>
    public async Task StopServerAsync()
    {
        if (_cluster is not null)
        {
            await _cluster.StopAsync();
            await _cluster.DisposeAsync();
            _cluster = null;
        }
    }

    /// <summary>A new fleet with one key per role.</summary>
    public async Task<TestFleet> NewFleetAsync()
    {
        var admin = new FleetAdmin(Store);
        string name = "fleet-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(6));
        var id = await admin.CreateFleetAsync(name);
        var ingest = await admin.CreateApiKeyAsync(id, ApiKeyRole.Ingest, "test");
        var read = await admin.CreateApiKeyAsync(id, ApiKeyRole.Read, "test");
        var adminKey = await admin.CreateApiKeyAsync(id, ApiKeyRole.Admin, "test");
        return new TestFleet(id, name, ingest.Secret, read.Secret, adminKey.Secret);
    }

    /// <summary>A client of <paramref name="host"/> (default: the shared one) sending <paramref name="secret"/>.</summary>
    public HttpClient Client(string? secret, ServiceFactory? host = null)
    {
        var client = (host ?? Host).CreateClient();
        if (secret is not null)
        {
            client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", secret);
        }

        return client;
    }

    /// <summary>
    /// Commits <paramref name="rows"/> straight into the store as the ingest would, without handing them to any track (a
    /// lost delivery, or data the ingest would never accept).
    /// </summary>
    public async Task StoreWithoutTrackAsync(IReadOnlyList<MeasurementRow> rows)
    {
        await using var connection = await Store.OpenConnectionAsync();
        await using var transaction = await connection.BeginTransactionAsync();
        Assert.Equal(rows.Count, (await MeasurementIngest.InsertNewAsync(connection, transaction, rows)).Inserted.Count);
        await transaction.CommitAsync();
    }

    /// <summary>Scalar query on the service's schema.</summary>
    public async Task<long> CountAsync(string sql, params object[] parameters)
    {
        await using var connection = await Store.OpenConnectionAsync();
        await using var command = new NpgsqlCommand(sql, connection);
        foreach (var p in parameters)
        {
            command.Parameters.Add(new NpgsqlParameter { Value = p });
        }

        return Convert.ToInt64(await command.ExecuteScalarAsync(), CultureInfo.InvariantCulture);
    }

    /// <inheritdoc />
    public async Task DisposeAsync()
    {
        await Host.DisposeAsync();
        await Store.DisposeAsync();
        NpgsqlConnection.ClearAllPools();
        await StopServerAsync();
        if (Directory.Exists(_dataDirectory))
        {
            Directory.Delete(_dataDirectory, recursive: true);
        }
    }
}
