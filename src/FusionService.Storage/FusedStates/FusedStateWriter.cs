// Bulk insert of fused states with PostgreSQL binary COPY.
using System.Globalization;
using System.Runtime.InteropServices;
using FusionService.Estimation.Time;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.FusedStates;

/// <summary>Writes <see cref="FusedStateRow"/>s into <c>fused_states</c> with binary COPY.</summary>
public static class FusedStateWriter
{
    private const string Columns =
        "(fleet_id, vehicle_id, time_us, measured_at, lat_deg, lon_deg, heading_rad, speed_mps, "
        + "yaw_rate_rps, accel_mps2, gyro_bias_rps, wheel_scale, covariance, ellipse_major_m, ellipse_minor_m, "
        + "ellipse_orientation_rad) FROM STDIN (FORMAT BINARY)";

    private const string Copy = "COPY fused_states " + Columns;

    /// <summary>
    /// Copies <paramref name="rows"/> into <c>fused_states</c> of the connection's <c>search_path</c> schema.
    /// All rows or none are stored: a failure (key already stored, a day without a partition, a violated
    /// check such as latitude out of range) aborts the whole COPY with a <see cref="PostgresException"/>.
    /// </summary>
    /// <param name="connection">An open connection.</param>
    /// <param name="transaction">The connection's current transaction or null; only checked to belong to
    /// <paramref name="connection"/> (COPY always runs in the connection's current transaction).</param>
    /// <param name="rows">Rows to store; <c>measured_at</c> is derived from <see cref="FusedStateRow.TimeUs"/>.
    /// The daily partition of every row must exist.</param>
    /// <param name="cancellationToken">Cancels the COPY; nothing is stored then.</param>
    /// <returns>Number of rows stored.</returns>
    /// <exception cref="ArgumentException">A row has an empty vehicle id or a covariance that is not 36 values
    /// long, or the transaction belongs to another connection.</exception>
    public static Task<ulong> WriteAsync(
        NpgsqlConnection connection,
        NpgsqlTransaction? transaction,
        IReadOnlyList<FusedStateRow> rows,
        CancellationToken cancellationToken = default) =>
        CopyAsync(connection, transaction, rows, Copy, cancellationToken);

    /// <summary>The COPY of <see cref="WriteAsync"/> into <paramref name="table"/> (a staging table with the same columns).</summary>
    internal static Task<ulong> WriteIntoAsync(
        NpgsqlConnection connection,
        NpgsqlTransaction? transaction,
        IReadOnlyList<FusedStateRow> rows,
        string table,
        CancellationToken cancellationToken = default) =>
        CopyAsync(connection, transaction, rows, "COPY " + table + " " + Columns, cancellationToken);

    private static async Task<ulong> CopyAsync(
        NpgsqlConnection connection,
        NpgsqlTransaction? transaction,
        IReadOnlyList<FusedStateRow> rows,
        string copy,
        CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(connection);
        ArgumentNullException.ThrowIfNull(rows);
        if (transaction is not null && !ReferenceEquals(transaction.Connection, connection))
        {
            throw new ArgumentException("The transaction belongs to another connection.", nameof(transaction));
        }

        if (rows.Count == 0)
        {
            return 0;
        }

        for (var i = 0; i < rows.Count; i++)
        {
            if (string.IsNullOrEmpty(rows[i].VehicleId))
            {
                throw new ArgumentException(string.Create(CultureInfo.InvariantCulture, $"Row {i}: VehicleId is empty."), nameof(rows));
            }

            if (rows[i].Covariance.Length != FusedStateRow.PackedCovarianceLength)
            {
                throw new ArgumentException(
                    string.Create(CultureInfo.InvariantCulture, $"Row {i}: Covariance has {rows[i].Covariance.Length} values, must have {FusedStateRow.PackedCovarianceLength}."),
                    nameof(rows));
            }
        }

        var importer = await connection.BeginBinaryImportAsync(copy, cancellationToken).ConfigureAwait(false);
        await using (importer.ConfigureAwait(false))
        {
            foreach (var row in rows)
            {
                await importer.StartRowAsync(cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.FleetId, NpgsqlDbType.Uuid, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.VehicleId, NpgsqlDbType.Text, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.TimeUs, NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(UnixMicroseconds.ToDateTimeUtc(row.TimeUs), NpgsqlDbType.TimestampTz, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.LatDeg, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.LonDeg, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.HeadingRad, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.SpeedMps, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.YawRateRps, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.AccelMps2, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.GyroBiasRps, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.WheelScale, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(AsArray(row.Covariance), NpgsqlDbType.Array | NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.EllipseMajorM, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.EllipseMinorM, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
                await importer.WriteAsync(row.EllipseOrientationRad, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
            }

            return await importer.CompleteAsync(cancellationToken).ConfigureAwait(false);
        }
    }

    // Reuses the caller's array when the memory spans all of it; copies otherwise.
    private static double[] AsArray(ReadOnlyMemory<double> values) =>
        MemoryMarshal.TryGetArray(values, out var segment)
            && segment.Array is { } array && segment.Offset == 0 && segment.Count == array.Length
            ? array
            : values.ToArray();
}
