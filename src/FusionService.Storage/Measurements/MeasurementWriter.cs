// Bulk insert of measurements known to be new, as chunks, with PostgreSQL binary COPY.
using System.Globalization;
using Npgsql;

namespace FusionService.Storage.Measurements;

/// <summary>Writes <see cref="MeasurementRow"/>s known to be new into <c>measurement_chunks</c> with binary COPY, the
/// fastest bulk path PostgreSQL offers (<see cref="MeasurementChunks"/>).</summary>
public static class MeasurementWriter
{
    /// <summary>
    /// Copies <paramref name="rows"/> as chunks into <c>measurement_chunks</c> of the connection's <c>search_path</c>
    /// schema, each row's outcome, NIS and reset flag as its verdict. Nothing checks whether a key is stored already
    /// (rows that may be stored go through <see cref="MeasurementIngest"/>). All rows or none are stored: any failure
    /// (a day without a partition, a violated check) aborts the whole COPY with a <see cref="PostgresException"/>.
    /// </summary>
    /// <param name="connection">An open connection.</param>
    /// <param name="transaction">The connection's current transaction, or null to commit the rows on their own.
    /// COPY always runs inside the connection's current transaction; this argument only checks that it
    /// belongs to <paramref name="connection"/>.</param>
    /// <param name="rows">Rows to store, each key once and not stored yet.
    /// The daily partition of every row must exist (see <see cref="Partitions.PartitionMaintainer"/>).</param>
    /// <param name="cancellationToken">Cancels the COPY; nothing is stored then.</param>
    /// <returns>Number of rows stored.</returns>
    /// <exception cref="ArgumentException">A row has an empty vehicle id or a non-UTC receive time, two rows have the same
    /// key, or the transaction belongs to another connection.</exception>
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
        var first = new Dictionary<MeasurementKey, int>(rows.Count);
        for (var i = 0; i < rows.Count; i++)
        {
            var row = rows[i];
            if (!first.TryAdd(MeasurementKey.Of(row), i))
            {
                throw new ArgumentException(Invariant($"Row {i}: the same key as row {first[MeasurementKey.Of(row)]} (vehicle, kind, time, message key)."), nameof(rows));
            }

            if (string.IsNullOrEmpty(row.VehicleId))
            {
                throw new ArgumentException(Invariant($"Row {i}: VehicleId is empty."), nameof(rows));
            }

            if (row.ReceivedAtUtc.Kind != DateTimeKind.Utc)
            {
                throw new ArgumentException(Invariant($"Row {i}: ReceivedAtUtc has Kind={row.ReceivedAtUtc.Kind}, must be Utc."), nameof(rows));
            }
        }

        await MeasurementChunks.CopyAsync(connection, rows, cancellationToken).ConfigureAwait(false);
        return (ulong)rows.Count;
    }

    private static string Invariant(FormattableString text) => text.ToString(CultureInfo.InvariantCulture);
}
