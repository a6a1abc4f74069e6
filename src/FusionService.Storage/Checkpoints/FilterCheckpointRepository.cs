// Storage of filter checkpoints, the restart points for re-processing.
using Dapper;
using FusionService.Storage.Bulk;
using Npgsql;

namespace FusionService.Storage.Checkpoints;

/// <summary>Stores and finds <see cref="FilterCheckpointRow"/>s in <c>filter_checkpoints</c>.</summary>
public sealed class FilterCheckpointRepository
{
    private const string UpsertSql = """
        INSERT INTO filter_checkpoints (fleet_id, vehicle_id, time_us, anchor_lat_deg, anchor_lon_deg, payload_version, payload)
        VALUES (@FleetId, @VehicleId, @TimeUs, @AnchorLatDeg, @AnchorLonDeg, @PayloadVersion, @Payload)
        ON CONFLICT (fleet_id, vehicle_id, time_us) DO UPDATE
        SET anchor_lat_deg = EXCLUDED.anchor_lat_deg,
            anchor_lon_deg = EXCLUDED.anchor_lon_deg,
            payload_version = EXCLUDED.payload_version,
            payload = EXCLUDED.payload,
            created_at = now()
        """;

    private const string NewestBeforeSql = """
        SELECT fleet_id AS FleetId, vehicle_id AS VehicleId, time_us AS TimeUs, anchor_lat_deg AS AnchorLatDeg,
               anchor_lon_deg AS AnchorLonDeg, payload_version AS PayloadVersion, payload AS Payload
        FROM filter_checkpoints
        WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId AND time_us < @TimeUs
        ORDER BY time_us DESC
        LIMIT 1
        """;

    private const string BetweenSql = """
        SELECT fleet_id AS FleetId, vehicle_id AS VehicleId, time_us AS TimeUs, anchor_lat_deg AS AnchorLatDeg,
               anchor_lon_deg AS AnchorLonDeg, payload_version AS PayloadVersion, payload AS Payload
        FROM filter_checkpoints
        WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId AND time_us > @AfterUs AND time_us < @BeforeUs
        ORDER BY time_us
        """;

    // Every vehicle keeps its newest checkpoint, however old: it is where the track restarts.
    private const string DeleteOlderSql = """
        DELETE FROM filter_checkpoints c
        WHERE c.time_us < @BeforeUs
          AND EXISTS (SELECT 1 FROM filter_checkpoints n
                      WHERE n.fleet_id = c.fleet_id AND n.vehicle_id = c.vehicle_id AND n.time_us > c.time_us)
        """;

    private readonly NpgsqlDataSource _dataSource;

    /// <summary>Creates the repository.</summary>
    /// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
    public FilterCheckpointRepository(NpgsqlDataSource dataSource)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        _dataSource = dataSource;
        DapperTypeHandlers.EnsureRegistered();
    }

    /// <summary>Stores <paramref name="checkpoint"/>, replacing one of the same fleet, vehicle and instant.</summary>
    /// <param name="checkpoint">The checkpoint; its fleet must exist.</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <exception cref="PostgresException">Unknown fleet (23503) or anchor out of range (23514).</exception>
    public async Task UpsertAsync(FilterCheckpointRow checkpoint, CancellationToken cancellationToken = default)
    {
        ArgumentException.ThrowIfNullOrEmpty(checkpoint.VehicleId, nameof(checkpoint));
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await connection.ExecuteAsync(
                new CommandDefinition(UpsertSql, checkpoint, cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    /// <summary>Deletes the vehicle's checkpoints at or after <paramref name="timeUs"/> (kept: the older ones).</summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="timeUs">Inclusive lower bound of what is deleted, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <returns>Number of checkpoints deleted.</returns>
    public Task<int> DeleteFromAsync(Guid fleetId, string vehicleId, long timeUs, CancellationToken cancellationToken = default) =>
        DeleteAsync("time_us >= @TimeUs", fleetId, vehicleId, long.MinValue, timeUs, cancellationToken);

    /// <summary>Deletes the vehicle's checkpoints strictly between <paramref name="afterUs"/> and <paramref name="beforeUs"/>.</summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="afterUs">Exclusive lower bound, Unix microseconds (kept: this one and older).</param>
    /// <param name="beforeUs">Exclusive upper bound, Unix microseconds (kept: this one and newer).</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <returns>Number of checkpoints deleted.</returns>
    public Task<int> DeleteBetweenAsync(Guid fleetId, string vehicleId, long afterUs, long beforeUs, CancellationToken cancellationToken = default) =>
        DeleteAsync("time_us > @AfterUs AND time_us < @TimeUs", fleetId, vehicleId, afterUs, beforeUs, cancellationToken);

    /// <summary>
    /// Deletes every vehicle's checkpoints older than <paramref name="beforeUs"/> except its newest one (retention: the
    /// measurements they would replay are gone).
    /// </summary>
    /// <param name="beforeUs">Exclusive upper bound, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <returns>Number of checkpoints deleted.</returns>
    public async Task<int> DeleteOlderThanAsync(long beforeUs, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await connection.ExecuteAsync(
                new CommandDefinition(DeleteOlderSql, new { BeforeUs = beforeUs }, cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    /// <summary>
    /// Deletes the vehicle's checkpoints whose time meets <paramref name="timeCondition"/> (a constant of this class, over
    /// @AfterUs and @TimeUs).
    /// </summary>
    private async Task<int> DeleteAsync(
        string timeCondition, Guid fleetId, string vehicleId, long afterUs, long timeUs, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await connection.ExecuteAsync(new CommandDefinition(
                "DELETE FROM filter_checkpoints WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId AND " + timeCondition,
                new { FleetId = fleetId, VehicleId = vehicleId, TimeUs = timeUs, AfterUs = afterUs },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    /// <summary>The vehicle's checkpoints strictly between <paramref name="afterUs"/> and <paramref name="beforeUs"/>, oldest first.</summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="afterUs">Exclusive lower bound, Unix microseconds.</param>
    /// <param name="beforeUs">Exclusive upper bound, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async Task<IReadOnlyList<FilterCheckpointRow>> CheckpointsBetweenAsync(
        Guid fleetId, string vehicleId, long afterUs, long beforeUs, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<FilterCheckpointRow>(new CommandDefinition(
                BetweenSql,
                new { FleetId = fleetId, VehicleId = vehicleId, AfterUs = afterUs, BeforeUs = beforeUs },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList();
        }
    }

    /// <summary>
    /// The newest checkpoint of the vehicle strictly before <paramref name="timeUs"/>, the state to replay from
    /// when a measurement taken at <paramref name="timeUs"/> arrives late; null when there is none.
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="timeUs">Exclusive upper bound, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    public async Task<FilterCheckpointRow?> NewestCheckpointBeforeAsync(
        Guid fleetId, string vehicleId, long timeUs, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<FilterCheckpointRow>(new CommandDefinition(
                NewestBeforeSql,
                new { FleetId = fleetId, VehicleId = vehicleId, TimeUs = timeUs },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList() is [var newest] ? newest : null;
        }
    }
}
