// The filter's verdicts on stored measurements, appended by binary COPY.
using FusionService.Estimation.Time;
using FusionService.Storage.Bulk;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Appends the filter's verdicts to <c>measurement_verdicts</c> (migrations 0005 and 0006) in one binary COPY. Nothing is
/// updated: a later verdict on the same measurement is a new row with a higher <c>verdict_id</c>, and readers take the
/// latest through <c>judged_measurements(...)</c>.
/// </summary>
public static class MeasurementVerdictLog
{
    private const string Copy =
        "COPY measurement_verdicts (fleet_id, vehicle_id, kind, time_us, message_key, measured_at, outcome, nis, track_reset, w0, w1) "
        + "FROM STDIN (FORMAT BINARY)";

    /// <summary>
    /// Appends <paramref name="verdicts"/> (one statement, atomic). Of several verdicts on one measurement in the list
    /// only the last is written, since it supersedes the others.
    /// </summary>
    /// <param name="dataSource">Data source of the store's schema.</param>
    /// <param name="verdicts">Verdicts in the order they were made; their measurements must be stored.</param>
    /// <param name="cancellationToken">Cancels the statement.</param>
    /// <returns>Number of verdict rows written.</returns>
    public static async Task<int> AppendAsync(
        NpgsqlDataSource dataSource, IReadOnlyList<MeasurementOutcomeUpdate> verdicts, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(dataSource);
        ArgumentNullException.ThrowIfNull(verdicts);
        var last = new Dictionary<MeasurementKey, int>(verdicts.Count);
        for (int i = 0; i < verdicts.Count; i++)
        {
            last[verdicts[i].Key] = i;
        }

        if (last.Count == 0)
        {
            return 0;
        }

        var connection = await dataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var importer = await connection.BeginBinaryImportAsync(Copy, cancellationToken).ConfigureAwait(false);
            await using (importer.ConfigureAwait(false))
            {
                // In the order the verdicts were made, so that verdict_id grows with it.
                for (int i = 0; i < verdicts.Count; i++)
                {
                    var verdict = verdicts[i];
                    if (last[verdict.Key] != i)
                    {
                        continue;
                    }

                    await importer.StartRowAsync(cancellationToken).ConfigureAwait(false);
                    await importer.WriteAsync(verdict.Key.FleetId, NpgsqlDbType.Uuid, cancellationToken).ConfigureAwait(false);
                    await importer.WriteAsync(verdict.Key.VehicleId, NpgsqlDbType.Text, cancellationToken).ConfigureAwait(false);
                    await importer.WriteAsync(verdict.Key.Kind, NpgsqlDbType.Smallint, cancellationToken).ConfigureAwait(false);
                    await importer.WriteAsync(verdict.Key.TimeUs, NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
                    await importer.WriteAsync(verdict.Key.MessageKey, NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
                    await importer.WriteAsync(UnixMicroseconds.ToDateTimeUtc(verdict.Key.TimeUs), NpgsqlDbType.TimestampTz, cancellationToken).ConfigureAwait(false);
                    await importer.WriteAsync(OutcomeCodes.ToCode(verdict.Outcome), NpgsqlDbType.Smallint, cancellationToken).ConfigureAwait(false);
                    await CopyValues.WriteNullableAsync(importer, verdict.Nis, cancellationToken).ConfigureAwait(false);
                    await importer.WriteAsync(verdict.TrackReset, NpgsqlDbType.Boolean, cancellationToken).ConfigureAwait(false);
                    await CopyValues.WriteNullableAsync(importer, verdict.Whitened0, cancellationToken).ConfigureAwait(false);
                    await CopyValues.WriteNullableAsync(importer, verdict.Whitened1, cancellationToken).ConfigureAwait(false);
                }

                return (int)await importer.CompleteAsync(cancellationToken).ConfigureAwait(false);
            }
        }
    }
}
