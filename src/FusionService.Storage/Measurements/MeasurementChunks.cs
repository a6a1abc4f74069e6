// Measurements packed per vehicle and ten-minute window into rows of measurement_chunks (migration 0013).
using FusionService.Estimation.Time;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Writes measurements as chunks (migration 0013): the rows of one vehicle and one aligned ten-minute window of
/// measurement time become one row of <c>measurement_chunks</c>, its measurements as parallel arrays in canonical order
/// (time, kind, message key) and their verdicts (outcome, NIS, reset, whitened innovation) as arrays beside them.
/// </summary>
public static class MeasurementChunks
{
    /// <summary>Length of the aligned window one chunk covers at most, microseconds (600 s; divides a UTC day).</summary>
    public const long WindowUs = 600_000_000;

    private const string Copy =
        "COPY measurement_chunks (fleet_id, vehicle_id, first_us, last_us, count, time_us, kind, message_key, received_us, "
        + "v0, v1, v2, flags, outcome, nis, track_reset, w0, w1) FROM STDIN (FORMAT BINARY)";

    /// <summary>
    /// Transaction-local planner settings for the statements that look chunks up by key for a list of vehicles (ingest's
    /// stored keys, the verdict writer's read and update): without statistics on the unnested arrays the planner may
    /// prefer a hash join over a sequential scan of every chunk of every partition, which a gateway's many small chunks
    /// make slow.
    /// </summary>
    internal const string IndexLookupsSql =
        "SELECT set_config('enable_seqscan', 'off', true), set_config('enable_hashjoin', 'off', true), "
        + "set_config('enable_mergejoin', 'off', true)";

    /// <summary>Widens the measurement-time range [Lo, Hi] kept for the vehicle to take in <paramref name="timeUs"/>.</summary>
    internal static void Widen(Dictionary<(Guid FleetId, string VehicleId), (long Lo, long Hi)> ranges, Guid fleetId, string vehicleId, long timeUs)
    {
        var vehicle = (fleetId, vehicleId);
        ranges[vehicle] = ranges.TryGetValue(vehicle, out var r) ? (Math.Min(r.Lo, timeUs), Math.Max(r.Hi, timeUs)) : (timeUs, timeUs);
    }

    /// <summary>The window of <paramref name="timeUs"/>: floor(time / <see cref="WindowUs"/>).</summary>
    public static long WindowOf(long timeUs) => Math.DivRem(timeUs, WindowUs, out long rest) - (rest < 0 ? 1 : 0);

    /// <summary>Canonical order of one vehicle's measurements: time, then kind, then message key.</summary>
    public static int CompareCanonical(in MeasurementRow a, in MeasurementRow b)
    {
        int c = a.TimeUs.CompareTo(b.TimeUs);
        if (c != 0)
        {
            return c;
        }

        c = a.Kind.CompareTo(b.Kind);
        return c != 0 ? c : a.MessageKey.CompareTo(b.MessageKey);
    }

    /// <summary>
    /// Stores <paramref name="rows"/> as chunks with one binary COPY, each row's outcome, NIS and reset flag as its first
    /// verdict (no whitened innovation). The rows must not be stored yet and must differ in key (the primary key of a
    /// chunk does not see inside it: the caller checks, see <see cref="MeasurementIngest"/>).
    /// </summary>
    /// <param name="connection">Open connection whose <c>search_path</c> names the store's schema.</param>
    /// <param name="rows">Rows of any fleets and vehicles, in any order; the daily partitions must exist.</param>
    /// <param name="cancellationToken">Cancels the COPY.</param>
    /// <returns>Number of chunks written.</returns>
    public static async Task<int> CopyAsync(NpgsqlConnection connection, IReadOnlyList<MeasurementRow> rows, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(connection);
        ArgumentNullException.ThrowIfNull(rows);
        if (rows.Count == 0)
        {
            return 0;
        }

        var groups = new Dictionary<(Guid FleetId, string VehicleId, long Window), List<MeasurementRow>>();
        foreach (var row in rows)
        {
            var key = (row.FleetId, row.VehicleId, WindowOf(row.TimeUs));
            if (!groups.TryGetValue(key, out var list))
            {
                groups[key] = list = [];
            }

            list.Add(row);
        }

        var importer = await connection.BeginBinaryImportAsync(Copy, cancellationToken).ConfigureAwait(false);
        await using (importer.ConfigureAwait(false))
        {
            foreach (var ((fleetId, vehicleId, _), list) in groups)
            {
                list.Sort(static (a, b) => CompareCanonical(a, b));
                await WriteChunkAsync(importer, fleetId, vehicleId, list, cancellationToken).ConfigureAwait(false);
            }

            await importer.CompleteAsync(cancellationToken).ConfigureAwait(false);
        }

        return groups.Count;
    }

    private static async Task WriteChunkAsync(
        NpgsqlBinaryImporter importer, Guid fleetId, string vehicleId, List<MeasurementRow> rows, CancellationToken cancellationToken)
    {
        int n = rows.Count;
        var time = new long[n];
        var kind = new short[n];
        var key = new long[n];
        var received = new long[n];
        var v0 = new double[n];
        var v1 = new double?[n];
        var v2 = new double?[n];
        var flags = new int[n];
        var outcome = new short[n];
        var nis = new double?[n];
        var reset = new bool[n];
        var w = new float?[n];
        for (int i = 0; i < n; i++)
        {
            var r = rows[i];
            time[i] = r.TimeUs;
            kind[i] = r.Kind;
            key[i] = r.MessageKey;
            received[i] = UnixMicroseconds.FromDateTime(r.ReceivedAtUtc);
            v0[i] = r.V0;
            v1[i] = r.V1;
            v2[i] = r.V2;
            flags[i] = r.Flags;
            outcome[i] = OutcomeCodes.ToCode(r.Outcome);
            nis[i] = r.Nis;
            reset[i] = r.TrackReset;
        }

        await importer.StartRowAsync(cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(fleetId, NpgsqlDbType.Uuid, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(vehicleId, NpgsqlDbType.Text, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(time[0], NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(time[^1], NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(n, NpgsqlDbType.Integer, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(time, NpgsqlDbType.Array | NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(kind, NpgsqlDbType.Array | NpgsqlDbType.Smallint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(key, NpgsqlDbType.Array | NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(received, NpgsqlDbType.Array | NpgsqlDbType.Bigint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(v0, NpgsqlDbType.Array | NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(v1, NpgsqlDbType.Array | NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(v2, NpgsqlDbType.Array | NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(flags, NpgsqlDbType.Array | NpgsqlDbType.Integer, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(outcome, NpgsqlDbType.Array | NpgsqlDbType.Smallint, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(nis, NpgsqlDbType.Array | NpgsqlDbType.Double, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(reset, NpgsqlDbType.Array | NpgsqlDbType.Boolean, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(w, NpgsqlDbType.Array | NpgsqlDbType.Real, cancellationToken).ConfigureAwait(false);
        await importer.WriteAsync(w, NpgsqlDbType.Array | NpgsqlDbType.Real, cancellationToken).ConfigureAwait(false);
    }
}
