// A migrated schema with one fleet and the partitions of the test day, and commits into it as the service makes them.
using FusionService.Storage.Fleets;
using FusionService.Storage.Measurements;
using FusionService.Storage.Partitions;

namespace FusionService.Storage.Tests.Infrastructure;

/// <summary>Set-up shared by the tests that store measurements.</summary>
public static class MeasurementStores
{
    /// <summary>A new migrated schema with partitions for <see cref="TestTimes.Day"/> and the day after, and one fleet.</summary>
    public static async Task<(TestSchema Schema, Guid Fleet)> NewFleetStoreAsync(this PostgresFixture server)
    {
        var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day.AddDays(1));
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("fleet-" + schema.Name);
        return (schema, fleet);
    }

    /// <summary>Stores <paramref name="rows"/> in one transaction as a group commit does; returns the keys it inserted.</summary>
    public static async Task<HashSet<MeasurementKey>> CommitAsync(TestSchema schema, IReadOnlyList<MeasurementRow> rows)
    {
        await using var connection = await schema.OpenAsync();
        await using var transaction = await connection.BeginTransactionAsync();
        var (inserted, _) = await MeasurementIngest.InsertNewAsync(connection, transaction, rows);
        await transaction.CommitAsync();
        return inserted;
    }
}
