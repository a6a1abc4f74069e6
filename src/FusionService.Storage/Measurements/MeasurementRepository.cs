// Reads of the measurement log.
using Dapper;
using FusionService.Storage.Time;
using Npgsql;

namespace FusionService.Storage.Measurements;

/// <summary>Queries on <c>measurements</c>, each row with its latest verdict (<c>judged_measurements</c>).</summary>
/// <param name="dataSource">Data source whose connections have the store's schema on their search path
/// (see <see cref="Schemas.StorageSchema.WithSearchPath"/>).</param>
public sealed class MeasurementRepository(NpgsqlDataSource dataSource)
{
    private const string RangeSql = """
        SELECT fleet_id AS FleetId, vehicle_id AS VehicleId, kind AS Kind, time_us AS TimeUs,
               message_key AS MessageKey, received_at AS ReceivedAtUtc, v0 AS V0, v1 AS V1, v2 AS V2,
               flags AS Flags, outcome AS Outcome, nis AS Nis, track_reset AS TrackReset
        FROM judged_measurements(@FleetId, @VehicleId, @FromUs, @ToUs, @FromAt, @ToAt)
        ORDER BY time_us, kind, message_key
        """;

    private readonly NpgsqlDataSource _dataSource = dataSource ?? throw new ArgumentNullException(nameof(dataSource));

    /// <summary>
    /// Measurements of one vehicle with <paramref name="fromUs"/> &lt;= time &lt; <paramref name="toUs"/>,
    /// ordered by time, then kind, then message key.
    /// </summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="fromUs">Inclusive start, Unix microseconds.</param>
    /// <param name="toUs">Exclusive end, Unix microseconds.</param>
    /// <param name="cancellationToken">Cancels the query.</param>
    /// <returns>The rows, <see cref="MeasurementRow.ReceivedAtUtc"/> with Kind=Utc.</returns>
    public async Task<IReadOnlyList<MeasurementRow>> ReadAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        if (toUs <= fromUs)
        {
            return [];
        }

        var parameters = TimeRangeParameters.For(fleetId, vehicleId, fromUs, toUs);
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var rows = await connection.QueryAsync<MeasurementRow>(
                new CommandDefinition(RangeSql, parameters, cancellationToken: cancellationToken)).ConfigureAwait(false);
            return rows.AsList();
        }
    }
}
