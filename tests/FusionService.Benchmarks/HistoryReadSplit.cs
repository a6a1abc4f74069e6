// Stopwatch split of the smoothed-track request's storage part: reading a stored van day back from PostgreSQL.
using System.Collections.Concurrent;
using System.Diagnostics;
using System.Globalization;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Cluster;
using FusionService.Storage.History;
using FusionService.Storage.Measurements;
using FusionService.Storage.Migrations;
using FusionService.Storage.Partitions;
using FusionService.Storage.Schemas;
using Npgsql;

namespace FusionService.Benchmarks;

/// <summary>
/// Stores <see cref="VanDayScenario"/> (one vehicle, about 550,000 rows) in a throwaway embedded PostgreSQL cluster by
/// binary COPY, then times with a stopwatch (<c>./build.sh bench history-split [repeats]</c>) what the smoothed-track
/// request does: reading the rows back into the replay's measurement list (the full read with verdicts the raw track
/// and the diagnostics use, and the replay read of values only that the smoothed track uses; both decode the vehicle's
/// chunks), and the replay and smoothing of that list.
/// </summary>
internal static class HistoryReadSplit
{
    /// <summary>Runs the split and prints one line per part.</summary>
    /// <param name="repeats">Repeats of each part.</param>
    public static async Task RunAsync(int repeats)
    {
        Measurement[] day = VanDayScenario.Instance.Measurements;
        await using var cluster = await EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions { NoSync = true });
        const string schema = "history_split";
        await new MigrationRunner(cluster.ConnectionString, schema).RunAsync();
        await using var dataSource = NpgsqlDataSource.Create(StorageSchema.WithSearchPath(cluster.ConnectionString, schema));
        var firstDay = DateOnly.FromDateTime(DateTime.UnixEpoch.AddTicks(day[0].TimeUs * 10));
        var lastDay = DateOnly.FromDateTime(DateTime.UnixEpoch.AddTicks(day[^1].TimeUs * 10));
        await new PartitionMaintainer(dataSource).EnsurePartitionsAsync(firstDay, lastDay);

        var fleet = Guid.NewGuid();
        const string vehicle = "van-day";
        var received = DateTime.UtcNow;
        var sw = Stopwatch.StartNew();
        await using (var connection = await dataSource.OpenConnectionAsync())
        {
            var rows = new List<MeasurementRow>(day.Length);
            foreach (Measurement m in day)
            {
                rows.Add(new MeasurementRow(
                    fleet, vehicle, (short)m.Kind, m.TimeUs, (long)m.MessageKey, received, m.Value0,
                    double.IsNaN(m.Value1) ? null : m.Value1, m.Value2, 0, OutcomeKind.Accepted, null, false));
            }

            await MeasurementWriter.WriteAsync(connection, null, rows);
            await using var analyze = new NpgsqlCommand("ANALYZE measurements", connection);
            await analyze.ExecuteNonQueryAsync();
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"stored {day.Length} rows in {sw.Elapsed.TotalSeconds:F1} s"));
        long fromUs = day[0].TimeUs;
        long toUs = day[^1].TimeUs + 1;
        if (Environment.GetEnvironmentVariable("FUSION_EXPLAIN") == "1")
        {
            await using var connection = await dataSource.OpenConnectionAsync();
            await using var explain = new NpgsqlCommand(
                "EXPLAIN (ANALYZE, BUFFERS) SELECT kind, time_us, message_key, v0, v1, v2 FROM measurements WHERE fleet_id = @f AND vehicle_id = @v "
                + "AND time_us >= @a AND time_us < @b AND outcome <> 3 ORDER BY time_us, kind, message_key", connection);
            explain.Parameters.AddWithValue("f", fleet);
            explain.Parameters.AddWithValue("v", vehicle);
            explain.Parameters.AddWithValue("a", fromUs);
            explain.Parameters.AddWithValue("b", toUs);
            await using var plan = await explain.ExecuteReaderAsync();
            while (await plan.ReadAsync())
            {
                Console.WriteLine(plan.GetString(0));
            }
        }

        await ReplayReadPartsAsync(dataSource, fleet, vehicle, fromUs, toUs, repeats);

        var reader = new TrackHistoryReader(dataSource);
        var twoConnections = new TrackHistoryReader(dataSource, 2);
        var rowByRowMs = new List<double>();
        var copyMs = new List<double>();
        var twoMs = new List<double>();
        var replayMs = new List<double>();
        var overlappedMs = new List<double>();
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        List<Measurement> read = [];
        for (int r = 0; r < repeats; r++)
        {
            sw.Restart();
            var list = new List<Measurement>();
            await foreach (var s in reader.StreamMeasurementsAsync(fleet, vehicle, fromUs, toUs, 0, (short)SensorKind.Imu))
            {
                if (s.Outcome == OutcomeKind.Duplicate)
                {
                    continue;
                }

                list.Add(MeasurementRows.ToMeasurement(s));
            }

            rowByRowMs.Add(sw.Elapsed.TotalMilliseconds);

            sw.Restart();
            read = [];
            await reader.ReadReplayMeasurementsAsync(
                fleet, vehicle, fromUs, toUs, 0, (short)SensorKind.Imu,
                s => read.Add(MeasurementRows.ToMeasurement(s)));
            copyMs.Add(sw.Elapsed.TotalMilliseconds);
            if (!list.SequenceEqual(read))
            {
                throw new InvalidOperationException("the two reads differ");
            }

            sw.Restart();
            var readTwo = new List<Measurement>();
            await twoConnections.ReadReplayMeasurementsAsync(
                fleet, vehicle, fromUs, toUs, 0, (short)SensorKind.Imu,
                s => readTwo.Add(MeasurementRows.ToMeasurement(s)));
            twoMs.Add(sw.Elapsed.TotalMilliseconds);
            if (!readTwo.SequenceEqual(read))
            {
                throw new InvalidOperationException("the two-connection read differs");
            }

            sw.Restart();
            var sequential = CompactedTrackReplay.Run(processor, TrackState.Empty, read, 1_000_000, expectedInstants: ExpectedInstants(fromUs, toUs));
            replayMs.Add(sw.Elapsed.TotalMilliseconds);

            sw.Restart();
            var overlapped = await ReadOverlappedAsync(reader, processor, fleet, vehicle, fromUs, toUs);
            overlappedMs.Add(sw.Elapsed.TotalMilliseconds);
            if (overlapped.Count != sequential.Count || overlapped[^1].Means[^1][0] != sequential[^1].Means[^1][0])
            {
                throw new InvalidOperationException("the overlapped replay differs");
            }
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"read back {read.Count} measurements, {repeats} repeats"));
        Print("full read with verdicts into the list", rowByRowMs);
        Print("replay read into the list", copyMs);
        Print("replay read, two connections", twoMs);
        Print("replay + compacted smoother", replayMs);
        Print("replay read overlapped with the replay", overlappedMs);
    }

    // The replay read's columns and chunk range, as TrackHistoryReader asks for them (the outcomes only of a chunk that
    // holds a duplicate, code 3).
    private static readonly string[] ReplayColumns = ["time_us", "kind", "message_key", "v0", "v1", "v2", "outcome"];

    private static string Send(string column) =>
        column == "outcome" ? "CASE WHEN 3::smallint = ANY (outcome) THEN array_send(outcome) END" : "array_send(" + column + ")";

    private const string ReplayChunkRange = """
        FROM measurement_chunks
        WHERE fleet_id = @FleetId AND vehicle_id = @VehicleId
          AND first_us > @FromUs - 600000000 AND first_us < @ToUs AND last_us >= @FromUs
        """;

    /// <summary>
    /// Where the replay read's time goes: PostgreSQL's own time for the query with its result discarded
    /// (<c>EXPLAIN (ANALYZE, TIMING OFF)</c> runs the scan and evaluates the select list, <c>array_send</c> included, but
    /// sends nothing), the same with the arrays only detoasted (<c>array_length</c>) and with the chunk keys alone, the
    /// <c>array_send</c> of each column alone, the bytes the arrays take on the wire, and on the client the rows read as
    /// byte arrays without decoding them.
    /// </summary>
    private static async Task ReplayReadPartsAsync(NpgsqlDataSource dataSource, Guid fleet, string vehicle, long fromUs, long toUs, int repeats)
    {
        string sendAll = "first_us, count, " + string.Join(", ", ReplayColumns.Select(Send));
        string detoastAll = "first_us, count, " + string.Join(", ", ReplayColumns.Select(c => "array_length(" + c + ", 1)"));
        var parts = new List<(string Label, string SelectList)>
        {
            ("server: chunk keys only", "first_us, count"),
            ("server: arrays detoasted (array_length)", detoastAll),
            ("server: replay select list (array_send)", sendAll),
        };
        parts.AddRange(ReplayColumns.Select(c => ("server: array_send(" + c + ") alone", "first_us, count, array_send(" + c + ")")));
        parts.Add(("server: outcome only with a duplicate", "first_us, count, " + Send("outcome")));
        foreach (var (label, selectList) in parts)
        {
            var ms = new List<double>();
            for (int r = 0; r < repeats; r++)
            {
                ms.Add(await ServerExecutionMsAsync(dataSource, "SELECT " + selectList + " " + ReplayChunkRange, fleet, vehicle, fromUs, toUs));
            }

            Print(label, ms);
        }

        await using (var connection = await dataSource.OpenConnectionAsync())
        {
            string sizes = string.Join(", ", ReplayColumns.Select(c => "coalesce(sum(octet_length(" + Send(c) + ")), 0)::bigint"));
            await using var command = Bind(new NpgsqlCommand("SELECT count(*)::bigint, sum(count)::bigint, " + sizes + " " + ReplayChunkRange, connection), fleet, vehicle, fromUs, toUs);
            await using var row = await command.ExecuteReaderAsync();
            await row.ReadAsync();
            long total = 0;
            var each = new List<string>();
            for (int i = 0; i < ReplayColumns.Length; i++)
            {
                long bytes = row.GetInt64(2 + i);
                total += bytes;
                each.Add(string.Create(CultureInfo.InvariantCulture, $"{ReplayColumns[i]} {bytes / 1e6:F1}"));
            }

            Console.WriteLine(string.Create(
                CultureInfo.InvariantCulture,
                $"replay read: {row.GetInt64(0)} chunks, {row.GetInt64(1)} measurements, array_send bytes {total / 1e6:F1} MB ({string.Join(", ", each)})"));
        }

        var rawMs = new List<double>();
        for (int r = 0; r < repeats; r++)
        {
            var sw = Stopwatch.StartNew();
            long bytes = 0;
            await using (var connection = await dataSource.OpenConnectionAsync())
            {
                await using var command = Bind(new NpgsqlCommand("SELECT " + sendAll + " " + ReplayChunkRange + " ORDER BY first_us, chunk_id", connection), fleet, vehicle, fromUs, toUs);
                await using var reader = await command.ExecuteReaderAsync();
                while (await reader.ReadAsync())
                {
                    for (int i = 2; i < 2 + ReplayColumns.Length; i++)
                    {
                        bytes += reader.IsDBNull(i) ? 0 : reader.GetFieldValue<byte[]>(i).Length;
                    }
                }
            }

            rawMs.Add(sw.Elapsed.TotalMilliseconds);
        }

        Print("client: replay query, arrays not decoded", rawMs);
    }

    private static async Task<double> ServerExecutionMsAsync(NpgsqlDataSource dataSource, string sql, Guid fleet, string vehicle, long fromUs, long toUs)
    {
        await using var connection = await dataSource.OpenConnectionAsync();
        await using var command = Bind(new NpgsqlCommand("EXPLAIN (ANALYZE, TIMING OFF, FORMAT JSON) " + sql, connection), fleet, vehicle, fromUs, toUs);
        string plan = (string)(await command.ExecuteScalarAsync())!;
        using var json = System.Text.Json.JsonDocument.Parse(plan);
        return json.RootElement[0].GetProperty("Execution Time").GetDouble();
    }

    private static NpgsqlCommand Bind(NpgsqlCommand command, Guid fleet, string vehicle, long fromUs, long toUs)
    {
        command.Parameters.AddWithValue("FleetId", fleet);
        command.Parameters.AddWithValue("VehicleId", vehicle);
        command.Parameters.AddWithValue("FromUs", fromUs);
        command.Parameters.AddWithValue("ToUs", toUs);
        return command;
    }

    /// <summary>Room for one smoothed instant per second of the window, capped as <c>SmoothedTrackBuilder</c> caps it.</summary>
    private static int ExpectedInstants(long fromUs, long toUs) => (int)Math.Min(((toUs - fromUs) / 1_000_000) + 2, 1 << 15);

    /// <summary>
    /// The read and the replay overlapped as <c>SmoothedTrackBuilder</c> runs them (chunks of rows to a replay thread),
    /// except that this probe makes a new array per chunk and keeps every row, as the builder did before it reused its
    /// chunk arrays and kept only wheel speeds (for /distance).
    /// </summary>
    private static async Task<IReadOnlyList<SmoothedSegment>> ReadOverlappedAsync(
        TrackHistoryReader reader, TrackProcessor processor, Guid fleet, string vehicle, long fromUs, long toUs)
    {
        const int chunkLength = 8192;
        using var chunks = new BlockingCollection<Measurement[]>();
        var kept = new List<Measurement>();
        var replay = Task.Factory.StartNew(
            () => CompactedTrackReplay.Run(processor, TrackState.Empty, Collect(chunks, kept), 1_000_000, expectedInstants: ExpectedInstants(fromUs, toUs)),
            CancellationToken.None,
            TaskCreationOptions.LongRunning,
            TaskScheduler.Default);
        try
        {
            var chunk = new Measurement[chunkLength];
            int filled = 0;
            await reader.ReadReplayMeasurementsAsync(fleet, vehicle, fromUs, toUs, 0, (short)SensorKind.Imu, s =>
            {
                chunk[filled++] = MeasurementRows.ToMeasurement(s);
                if (filled == chunkLength)
                {
                    chunks.Add(chunk);
                    chunk = new Measurement[chunkLength];
                    filled = 0;
                }
            });
            if (filled > 0)
            {
                chunks.Add(chunk[..filled]);
            }
        }
        finally
        {
            chunks.CompleteAdding();
        }

        return await replay;
    }

    private static IEnumerable<Measurement> Collect(BlockingCollection<Measurement[]> chunks, List<Measurement> kept)
    {
        foreach (Measurement[] chunk in chunks.GetConsumingEnumerable())
        {
            foreach (Measurement m in chunk)
            {
                kept.Add(m);
                yield return m;
            }
        }
    }

    private static void Print(string what, List<double> ms)
    {
        ms.Sort();
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"{what,-40} best {ms[0],8:F0} ms  median {ms[ms.Count / 2],8:F0} ms"));
    }
}
