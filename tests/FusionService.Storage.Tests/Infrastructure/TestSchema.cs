// A private schema for one test, dropped afterwards.
using System.Security.Cryptography;
using FusionService.Storage.Schemas;
using Npgsql;

namespace FusionService.Storage.Tests.Infrastructure;

/// <summary>A schema with a random name owned by one test, so no test sees another's rows. Disposing drops it
/// with everything in it.</summary>
public sealed class TestSchema : IAsyncDisposable
{
    private readonly string _serverConnectionString;

    /// <summary>Creates the name and a data source whose connections use the schema (it is created by the
    /// migration runner, or by the test).</summary>
    public TestSchema(string serverConnectionString)
    {
        _serverConnectionString = serverConnectionString;
        Name = "t_" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(8));
        ConnectionString = StorageSchema.WithSearchPath(serverConnectionString, Name);
        DataSource = NpgsqlDataSource.Create(ConnectionString);
    }

    /// <summary>The schema's name.</summary>
    public string Name { get; }

    /// <summary>The server's connection string with the search path set to this schema.</summary>
    public string ConnectionString { get; }

    /// <summary>Data source for this schema.</summary>
    public NpgsqlDataSource DataSource { get; }

    /// <summary>Opens a connection in this schema.</summary>
    public async Task<NpgsqlConnection> OpenAsync() => await DataSource.OpenConnectionAsync();

    /// <summary>Runs a scalar query in this schema.</summary>
    public async Task<T> ScalarAsync<T>(string sql, params object[] parameters)
    {
        await using var connection = await OpenAsync();
        await using var command = new NpgsqlCommand(sql, connection);
        foreach (var parameter in parameters)
        {
            command.Parameters.Add(new NpgsqlParameter { Value = parameter });
        }

        return (T)(await command.ExecuteScalarAsync())!;
    }

    /// <inheritdoc />
    public async ValueTask DisposeAsync()
    {
        await DataSource.DisposeAsync();
        await using var connection = new NpgsqlConnection(_serverConnectionString);
        await connection.OpenAsync();
        await using var drop = new NpgsqlCommand("DROP SCHEMA IF EXISTS \"" + Name + "\" CASCADE", connection);
        await drop.ExecuteNonQueryAsync();
    }
}
