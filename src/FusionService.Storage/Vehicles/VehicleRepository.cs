// Queries on the vehicles table.
using Dapper;
using Npgsql;

namespace FusionService.Storage.Vehicles;

/// <summary>Queries on <c>vehicles</c> (rows are created by <see cref="Measurements.MeasurementIngest"/>).</summary>
/// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
public sealed class VehicleRepository(NpgsqlDataSource dataSource)
{
    private readonly NpgsqlDataSource _dataSource = dataSource ?? throw new ArgumentNullException(nameof(dataSource));

    /// <summary>Whether <paramref name="fleetId"/> has a vehicle named <paramref name="vehicleId"/>.</summary>
    public async Task<bool> ExistsAsync(Guid fleetId, string vehicleId, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await connection.ExecuteScalarAsync<bool>(new CommandDefinition(
                "SELECT EXISTS (SELECT 1 FROM vehicles WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId)",
                new { FleetId = fleetId, VehicleId = vehicleId },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    /// <summary>The vehicle ids of <paramref name="fleetId"/>, in ordinal order.</summary>
    public async Task<IReadOnlyList<string>> ListAsync(Guid fleetId, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<string>(new CommandDefinition(
                "SELECT vehicle_id FROM vehicles WHERE fleet_id = @FleetId ORDER BY vehicle_id COLLATE \"C\"",
                new { FleetId = fleetId },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList();
        }
    }
}
