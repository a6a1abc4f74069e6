// Bulk insert of measurements with PostgreSQL binary COPY.
using System.Globalization;
using FusionService.Estimation.Time;
using FusionService.Storage.Bulk;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>Writes <see cref="MeasurementRow"/>s into <c>measurements</c> with binary COPY, the fastest bulk path
/// PostgreSQL offers.</summary>
public static class MeasurementWriter
{
    private const string Copy =
        "COPY measurements (fleet_id, vehicle_id, kind, time_us, measured_at, message_key, received_at, "
        + "v0, v1, v2, flags, outcome, nis, track_reset) FROM STDIN (FORMAT BINARY)";

    /// <summary>
    /// Copies <paramref name="rows"/> into <c>measurements</c> of the connection's <c>search_path</c> schema.
    /// All rows or none are stored: any failure (a key already stored, a day without a partition, a violated
    /// check) aborts the whole COPY with a <see cref="PostgresException"/>.
    /// </summary>
    /// <param name="connection">An open connection.</param>
    /// <param name="transaction">The connection's current transaction, or null to commit the rows on their own.
    /// COPY always runs inside the connection's current transaction; this argument only checks that it
    /// belongs to <paramref name="connection"/>.</param>
    /// <param name="rows">Rows to store; <c>measured_at</c> is derived from <see cref="MeasurementRow.TimeUs"/>.
    /// The daily partition of every row must exist (see <see cref="Partitions.PartitionMaintainer"/>).</param>
    /// <param name="cancellationToken">Cancels the COPY; nothing is stored then.</param>
    /// <returns>Number of rows stored.</returns>
    /// <exception cref="ArgumentException">A row has an empty vehicle id or a non-UTC receive time, or the
    /// transaction belongs to another connection.</exception>
    public static async Task<ulong> WriteAsync(
        NpgsqlConnection connection,
        NpgsqlTransaction? transaction,
        IReadOnlyList<MeasurementRow> rows,
        CancellationToken cancellationToken = default)
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

        // Checked before the COPY starts, so a bad row costs no round trip and names its index.
        for (var i = 0; i < rows.Count; i++)
        {
            var row = rows[i];
            if (string.IsNullOrEmpty(row.VehicleId))
            {
                throw new ArgumentException(Invariant($"Row {i}: VehicleId is empty."), nameof(rows));
            }

            if (row.ReceivedAtUtc.Kind != DateTimeKind.Utc)
            {
                throw new ArgumentException(Invariant($"Row {i}: ReceivedAtUtc has Kind={row.ReceivedAtUtc.Kind}, must be Utc."), nameof(rows));
            }
        }

        var importer = await connection.BeginBinaryImportAsync(Copy, cancellationToken).ConfigureAwait(false);
        await using (importer.ConfigureAwait(false))
        {
            foreach (var row in rows)
            {
                await WriteRowAsync(importer, row, cancellationToken).ConfigureAwait(false);
            }

            return await importer.CompleteAsync(cancellationToken).ConfigureAwait(false);
        }
    }

    private static string Invariant(FormattableString text) => text.ToString(CultureInfo.InvariantCulture);

    /// <summary>Writes one row in the column order of the measurements table (shared with <see cref="MeasurementIngest"/>).</summary>
    internal static async Task WriteRowAsync(NpgsqlBinaryImporter importer, MeasurementRow row, CancellationToken cancellationToken)
    {
        await importer.StartRowAsync(cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.FleetId, NpgsqlDbType.Uuid, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.VehicleId, NpgsqlDbType.Text, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.Kind, NpgsqlDbType.Smallint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.TimeUs, NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(UnixMicroseconds.ToDateTimeUtc(row.TimeUs), NpgsqlDbType.TimestampTz, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.MessageKey, NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.ReceivedAtUtc, NpgsqlDbType.TimestampTz, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.V0, NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
        await CopyValues.WriteNullableAsync(importer, row.V1, cancellationToken).ConfigureAwait(false);
        await CopyValues.WriteNullableAsync(importer, row.V2, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.Flags, NpgsqlDbType.Integer, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(OutcomeCodes.ToCode(row.Outcome), NpgsqlDbType.Smallint, cancellationToken).ConfigureAwait(false);
        await CopyValues.WriteNullableAsync(importer, row.Nis, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(row.TrackReset, NpgsqlDbType.Boolean, cancellationToken).ConfigureAwait(false);
    }
}
