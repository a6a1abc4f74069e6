// The fleet list: one row per vehicle from the tables the write path keeps.
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Vehicles;

/// <summary>
/// Reads the fleet list from <c>vehicle_latest_states</c> and <c>vehicle_receipts</c> (kept by the write path, one row
/// per vehicle and per vehicle and sensor kind) and the vehicles' unresolved alerts, so that its cost grows with the
/// number of vehicles, not with the stored history.
/// </summary>
/// <param name="dataSource">Data source whose connections have the store's schema on their search path.</param>
public sealed class FleetVehicleRepository(NpgsqlDataSource dataSource)
{
    /// <summary>The states a vehicle of the list can be in, in the order they take precedence.</summary>
    public static readonly IReadOnlyList<string> Statuses = ["silent", "carried", "moving", "stopped"];

    // Sensor kinds as stored (the estimation core's SensorKind): 0 GNSS position, 1 GNSS velocity, 2 wheel, 3 IMU.
    private const string Sql = """
        SELECT s.vehicle_id, s.time_us, s.lat_deg, s.lon_deg, s.heading_rad, s.speed_mps,
               s.ellipse_major_m, s.ellipse_minor_m, s.ellipse_orientation_rad,
               r.any_at, r.gnss_at, r.wheel_at, r.imu_at,
               coalesce(a.open_count, 0), coalesce(a.unresolved_count, 0), st.status
        FROM vehicle_latest_states s
        LEFT JOIN LATERAL (
            SELECT max(last_received_at) AS any_at,
                   max(last_received_at) FILTER (WHERE kind IN (0, 1)) AS gnss_at,
                   max(last_received_at) FILTER (WHERE kind = 2) AS wheel_at,
                   max(last_received_at) FILTER (WHERE kind = 3) AS imu_at
            FROM vehicle_receipts r WHERE r.fleet_id = s.fleet_id AND r.vehicle_id = s.vehicle_id) r ON true
        LEFT JOIN LATERAL (
            SELECT count(*) FILTER (WHERE a.state = 'open') AS open_count, count(*) AS unresolved_count,
                   bool_or(a.kind = 'moved_without_driving') AS carried
            FROM alerts a WHERE a.fleet_id = s.fleet_id AND a.vehicle_id = s.vehicle_id AND a.state <> 'resolved') a ON true
        CROSS JOIN LATERAL (SELECT CASE
            WHEN coalesce(r.any_at, to_timestamp(s.time_us / 1e6)) < $2 - make_interval(secs => $3) THEN 'silent'
            WHEN coalesce(a.carried, false) THEN 'carried'
            WHEN abs(s.speed_mps) >= $4 THEN 'moving'
            ELSE 'stopped' END AS status) st
        WHERE s.fleet_id = $1
          AND ($5::text IS NULL OR s.vehicle_id COLLATE "C" > $5)
          AND ($6::text[] IS NULL OR st.status = ANY ($6))
          AND ($7::boolean IS NULL OR (coalesce(a.open_count, 0) > 0) = $7)
        ORDER BY s.vehicle_id COLLATE "C"
        LIMIT $8
        """;

    // A page of at most 1000 plus one row that tells the caller whether another page follows.
    private const int MaxRows = 1001;

    private readonly NpgsqlDataSource _dataSource = dataSource ?? throw new ArgumentNullException(nameof(dataSource));

    /// <summary>The vehicles of the fleet that have an estimate and pass the filters, in byte order of their ids.</summary>
    public async Task<IReadOnlyList<FleetVehicleRow>> ListAsync(FleetVehicleQuery query, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(query);
        var list = new List<FleetVehicleRow>();
        var connection = await _dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            await using var command = new NpgsqlCommand(Sql, connection);
            command.Parameters.Add(new NpgsqlParameter { Value = query.FleetId });
            command.Parameters.Add(new NpgsqlParameter { Value = query.NowUtc.UtcDateTime, NpgsqlDbType = NpgsqlDbType.TimestampTz });
            command.Parameters.Add(new NpgsqlParameter { Value = query.SilentAfterS, NpgsqlDbType = NpgsqlDbType.Double });
            command.Parameters.Add(new NpgsqlParameter { Value = query.MovingMinSpeedMps, NpgsqlDbType = NpgsqlDbType.Double });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.After ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Text });
            command.Parameters.Add(new NpgsqlParameter { Value = query.Statuses is null ? DBNull.Value : query.Statuses.ToArray(), NpgsqlDbType = NpgsqlDbType.Array | NpgsqlDbType.Text });
            command.Parameters.Add(new NpgsqlParameter { Value = (object?)query.WithOpenAlerts ?? DBNull.Value, NpgsqlDbType = NpgsqlDbType.Boolean });
            command.Parameters.Add(new NpgsqlParameter { Value = Math.Clamp(query.Limit, 1, MaxRows) });
            var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
            await using (reader.ConfigureAwait(false))
            {
                while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                {
                    DateTime? At(int i) => reader.IsDBNull(i) ? null : DateTime.SpecifyKind(reader.GetDateTime(i), DateTimeKind.Utc);
                    list.Add(new FleetVehicleRow(
                        reader.GetString(0), reader.GetInt64(1), reader.GetDouble(2), reader.GetDouble(3), reader.GetDouble(4), reader.GetDouble(5),
                        reader.GetDouble(6), reader.GetDouble(7), reader.GetDouble(8), At(9), At(10), At(11), At(12),
                        reader.GetInt64(13), reader.GetInt64(14), reader.GetString(15)));
                }
            }
        }

        return list;
    }
}
