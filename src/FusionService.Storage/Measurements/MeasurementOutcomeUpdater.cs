// Bulk update of measurement outcomes: binary COPY into a staging table, then one UPDATE ... FROM.
using FusionService.Storage.Bulk;
using FusionService.Storage.Time;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>Writes the filter's verdicts onto stored measurements in bulk (COPY into a staging table, one
/// <c>UPDATE ... FROM</c> that prunes partitions on <c>measured_at</c>).</summary>
public static class MeasurementOutcomeUpdater
{
    private const string CreateStaging =
        "CREATE TEMP TABLE IF NOT EXISTS outcome_staging (fleet_id uuid, vehicle_id text, kind smallint, time_us bigint, "
        + "measured_at timestamptz, message_key bigint, outcome smallint, nis double precision, track_reset boolean) "
        + "ON COMMIT DELETE ROWS";

    private const string Copy =
        "COPY outcome_staging (fleet_id, vehicle_id, kind, time_us, measured_at, message_key, outcome, nis, track_reset) "
        + "FROM STDIN (FORMAT BINARY)";

    private const string Update =
        "UPDATE measurements m SET outcome = s.outcome, nis = s.nis, track_reset = s.track_reset FROM outcome_staging s "
        + "WHERE m.fleet_id = s.fleet_id AND m.vehicle_id = s.vehicle_id AND m.time_us = s.time_us AND m.kind = s.kind "
        + "AND m.message_key = s.message_key AND m.measured_at = s.measured_at";

    /// <summary>
    /// Applies <paramref name="updates"/> in one transaction. When one measurement appears more than once, the last
    /// update wins (a re-processing supersedes the earlier verdict).
    /// </summary>
    /// <param name="dataSource">Data source of the store's schema.</param>
    /// <param name="updates">Verdicts in the order they were made.</param>
    /// <param name="cancellationToken">Cancels the statements.</param>
    /// <returns>Number of rows updated.</returns>
    public static async Task<int> ApplyAsync(
        NpgsqlDataSource dataSource, IReadOnlyList<MeasurementOutcomeUpdate> updates, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        ArgumentNullException.ThrowIfNull(updates);
        var last = new Dictionary<MeasurementKey, MeasurementOutcomeUpdate>();
        foreach (var update in updates)
        {
            last[update.Key] = update;
        }

        if (last.Count == 0)
        {
            return 0;
        }

        var connection = await dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                await using (var create = new NpgsqlCommand(CreateStaging, connection, transaction))
                {
                    await create.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                var importer = await connection.BeginBinaryImportAsync(Copy, cancellationToken).ConfigureAwait(false);
                await using (importer.ConfigureAwait(false))
                {
                    foreach (var update in last.Values)
                    {
                        await importer.StartRowAsync(cancellationToken).ConfigureAwait(false);
                        await importer.WriteAsync(update.Key.FleetId, NpgsqlDbType.Uuid, cancellationToken).ConfigureAwait(false);
                        await importer.WriteAsync(update.Key.VehicleId, NpgsqlDbType.Text, cancellationToken).ConfigureAwait(false);
                        await importer.WriteAsync(update.Key.Kind, NpgsqlDbType.Smallint, cancellationToken).ConfigureAwait(false);
                        await importer.WriteAsync(update.Key.TimeUs, NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
                        await importer.WriteAsync(UnixMicroseconds.ToDateTimeUtc(update.Key.TimeUs), NpgsqlDbType.TimestampTz, cancellationToken).ConfigureAwait(false);
                        await importer.WriteAsync(update.Key.MessageKey, NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
                        await importer.WriteAsync((short)update.Outcome, NpgsqlDbType.Smallint, cancellationToken).ConfigureAwait(false);
                        await CopyValues.WriteNullableAsync(importer, update.Nis, cancellationToken).ConfigureAwait(false);
                        await importer.WriteAsync(update.TrackReset, NpgsqlDbType.Boolean, cancellationToken).ConfigureAwait(false);
                    }

                    await importer.CompleteAsync(cancellationToken).ConfigureAwait(false);
                }

                int updated;
                await using (var command = new NpgsqlCommand(Update, connection, transaction))
                {
                    updated = await command.ExecuteNonQueryAsync(cancellationToken).ConfigureAwait(false);
                }

                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return updated;
            }
        }
    }
}
