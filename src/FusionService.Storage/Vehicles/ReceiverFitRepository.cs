// Each vehicle's GNSS receiver fit and the pair a new vehicle's fit starts from.
using Dapper;
using FusionService.Estimation.Tracking;
using Npgsql;

namespace FusionService.Storage.Vehicles;

/// <summary>
/// Keeps each vehicle's newest receiver fit (<c>vehicle_receiver_fits</c>) and decides, once per vehicle, the pair its
/// track's fit starts from (<c>vehicles.gnss_start_*</c>, migration 0014): the median share and the median time constant
/// of the fleet's other vehicles whose fits rest on enough evidence of their own, when there are enough of them.
/// </summary>
/// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
public sealed class ReceiverFitRepository(NpgsqlDataSource dataSource)
{
    private const string UpsertSql = """
        INSERT INTO vehicle_receiver_fits AS r (fleet_id, vehicle_id, share, time_constant_s, long_lag_terms)
        VALUES (@FleetId, @VehicleId, @Share, @TimeConstantS, @LongLagTerms)
        ON CONFLICT (fleet_id, vehicle_id) DO UPDATE
        SET share = EXCLUDED.share, time_constant_s = EXCLUDED.time_constant_s, long_lag_terms = EXCLUDED.long_lag_terms,
            updated_at = now()
        """;

    // percentile_cont(0.5): the median, the mean of the two middle values for an even count (PostgreSQL manual, 9.21
    // "Aggregate Functions", ordered-set aggregates). Share and time constant take their medians separately.
    private const string DecideSql = """
        WITH fleet AS (
            SELECT count(*) AS n,
                   percentile_cont(0.5) WITHIN GROUP (ORDER BY share) AS share,
                   percentile_cont(0.5) WITHIN GROUP (ORDER BY time_constant_s) AS tau
            FROM vehicle_receiver_fits
            WHERE fleet_id = @FleetId AND vehicle_id <> @VehicleId AND long_lag_terms >= @MinLongLagTerms)
        UPDATE vehicles v
        SET gnss_start_decided = true,
            gnss_start_share = CASE WHEN fleet.n >= @MinVehicles AND @MinVehicles > 0 THEN fleet.share END,
            gnss_start_time_constant_s = CASE WHEN fleet.n >= @MinVehicles AND @MinVehicles > 0 THEN fleet.tau END
        FROM fleet
        WHERE v.fleet_id = @FleetId AND v.vehicle_id = @VehicleId AND NOT v.gnss_start_decided
        """;

    private const string StartSql = """
        SELECT gnss_start_decided AS Decided, gnss_start_share AS Share, gnss_start_time_constant_s AS TimeConstantS
        FROM vehicles WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId
        """;

    // Percentiles by percentile_cont (linear interpolation between the ordered values; PostgreSQL manual 9.21).
    private const string SummarySql = """
        SELECT count(*) AS Fitted,
               count(*) FILTER (WHERE long_lag_terms >= @MinLongLagTerms) AS Counted,
               percentile_cont(0.5) WITHIN GROUP (ORDER BY share) FILTER (WHERE long_lag_terms >= @MinLongLagTerms) AS MedianShare,
               percentile_cont(0.5) WITHIN GROUP (ORDER BY time_constant_s) FILTER (WHERE long_lag_terms >= @MinLongLagTerms) AS MedianTimeConstantS,
               percentile_cont(0.1) WITHIN GROUP (ORDER BY share) FILTER (WHERE long_lag_terms >= @MinLongLagTerms) AS ShareP10,
               percentile_cont(0.9) WITHIN GROUP (ORDER BY share) FILTER (WHERE long_lag_terms >= @MinLongLagTerms) AS ShareP90,
               percentile_cont(0.1) WITHIN GROUP (ORDER BY time_constant_s) FILTER (WHERE long_lag_terms >= @MinLongLagTerms) AS TimeConstantP10S,
               percentile_cont(0.9) WITHIN GROUP (ORDER BY time_constant_s) FILTER (WHERE long_lag_terms >= @MinLongLagTerms) AS TimeConstantP90S,
               (SELECT count(*) FROM vehicles v WHERE v.fleet_id = @FleetId AND v.gnss_start_share IS NOT NULL) AS StartedFromFleet
        FROM vehicle_receiver_fits
        WHERE fleet_id = @FleetId
        """;

    private readonly NpgsqlDataSource _dataSource = dataSource ?? throw new ArgumentNullException(nameof(dataSource));

    /// <summary>What the fleet's receivers have fitted; a fit counts when it rests on <paramref name="minLongLagTerms"/> long-lag terms of its own.</summary>
    public async Task<FleetReceiverSummary> SummaryAsync(Guid fleetId, double minLongLagTerms, CancellationToken cancellationToken = default)
    {
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await connection.QuerySingleAsync<FleetReceiverSummary>(new CommandDefinition(
                SummarySql, new { FleetId = fleetId, MinLongLagTerms = minLongLagTerms }, cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    /// <summary>Stores the vehicle's newest receiver fit.</summary>
    /// <param name="fleetId">Owning fleet (must exist).</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="share">Fitted correlated share, in (0, 1).</param>
    /// <param name="timeConstantS">Fitted time constant, seconds.</param>
    /// <param name="longLagTerms">Long-lag terms of the vehicle's own behind the fit (the prior's not counted).</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    public async Task UpsertAsync(Guid fleetId, string vehicleId, double share, double timeConstantS, double longLagTerms, CancellationToken cancellationToken = default)
    {
        ArgumentException.ThrowIfNullOrEmpty(vehicleId);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await connection.ExecuteAsync(new CommandDefinition(
                UpsertSql,
                new { FleetId = fleetId, VehicleId = vehicleId, Share = share, TimeConstantS = timeConstantS, LongLagTerms = longLagTerms },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
        }
    }

    /// <summary>
    /// The vehicle's start, deciding it first if it is not yet: from the fleet's median when at least
    /// <paramref name="minVehicles"/> other vehicles hold fits on at least <paramref name="minLongLagTerms"/> long-lag
    /// terms of their own, else from the configured pair. A decided start never changes. Null when the vehicle is unknown.
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="minVehicles">Fitted vehicles the fleet needs to give a start; 0 never gives one.</param>
    /// <param name="minLongLagTerms">Own long-lag terms a vehicle's fit needs to count.</param>
    /// <param name="cancellationToken">Cancels the statements.</param>
    public async Task<ReceiverStart?> DecideStartAsync(
        Guid fleetId, string vehicleId, int minVehicles, double minLongLagTerms, CancellationToken cancellationToken = default)
    {
        ArgumentException.ThrowIfNullOrEmpty(vehicleId);
        ArgumentOutOfRangeException.ThrowIfNegative(minVehicles);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await connection.ExecuteAsync(new CommandDefinition(
                DecideSql,
                new { FleetId = fleetId, VehicleId = vehicleId, MinVehicles = minVehicles, MinLongLagTerms = minLongLagTerms },
                cancellationToken: cancellationToken)).ConfigureAwait(false);
            return await ReadStartAsync(connection, fleetId, vehicleId, cancellationToken).ConfigureAwait(false);
        }
    }

    /// <summary>The vehicle's start as decided (not deciding it); null when the vehicle is unknown.</summary>
    public async Task<ReceiverStart?> StartOfAsync(Guid fleetId, string vehicleId, CancellationToken cancellationToken = default)
    {
        ArgumentException.ThrowIfNullOrEmpty(vehicleId);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            return await ReadStartAsync(connection, fleetId, vehicleId, cancellationToken).ConfigureAwait(false);
        }
    }

    /// <summary>
    /// The fresh track state a replay from the vehicle's first measurement starts from (<see cref="ReceiverStart.TrackStart"/>
    /// of its decided start; <see cref="TrackState.Empty"/> for an unknown vehicle).
    /// </summary>
    public async Task<TrackState> StartStateAsync(Guid fleetId, string vehicleId, CancellationToken cancellationToken = default) =>
        (await StartOfAsync(fleetId, vehicleId, cancellationToken).ConfigureAwait(false))?.TrackStart ?? TrackState.Empty;

    private static async Task<ReceiverStart?> ReadStartAsync(NpgsqlConnection connection, Guid fleetId, string vehicleId, CancellationToken cancellationToken)
    {
        var rows = await connection.QueryAsync<ReceiverStart>(new CommandDefinition(
            StartSql, new { FleetId = fleetId, VehicleId = vehicleId }, cancellationToken: cancellationToken)).ConfigureAwait(false);
        return rows.Select(r => (ReceiverStart?)r).FirstOrDefault();
    }
}
