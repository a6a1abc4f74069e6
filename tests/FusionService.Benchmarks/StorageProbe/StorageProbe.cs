// ./build.sh bench storage-probe [repeats]: bytes per stored measurement and replay-read time of candidate layouts.
using System.Diagnostics;
using System.Globalization;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Time;
using FusionService.Storage.Cluster;
using FusionService.Storage.FusedStates;
using FusionService.Storage.History;
using FusionService.Storage.Measurements;
using FusionService.Storage.Migrations;
using FusionService.Storage.Partitions;
using FusionService.Storage.Schemas;
using Npgsql;
using NpgsqlTypes;

namespace FusionService.Benchmarks.StorageProbe;

/// <summary>
/// Starts a throwaway PostgreSQL cluster (the service's settings, fsync on), stores the <see cref="StorageProbeDay"/>
/// in each candidate layout in a schema of its own, and prints per layout the bytes per stored measurement
/// (<c>pg_total_relation_size</c>: heap, TOAST and indexes of every table of the schema, after <c>VACUUM ANALYZE</c>),
/// the load time and the time to read the vehicle-day back in canonical order for a replay. Every layout's read is
/// checked equal, measurement by measurement, to the day that was stored. No service code is changed: layout a is the
/// service's migrations and writers; b and c are probes (docs/storage-cost.md).
/// </summary>
internal static class StorageProbe
{
    private const string Vehicle = "van-day";
    private const string UniqueViolation = "23505";

    public static async Task RunAsync(int repeats, bool serviceOnly = false)
    {
        var fleet = Guid.NewGuid();
        var sw = Stopwatch.StartNew();
        var day = new StorageProbeDay(fleet, Vehicle);
        long resent = day.Deliveries.Count(d => d.Fresh.Length < d.To - d.From);
        Say($"van-day: {day.Measurements.Length} measurements, {day.Deliveries.Count} uploads ({resent} carrying already-stored rows), {day.VerdictWrites} verdict writes, {day.FusedStates.Length} fused states; built in {sw.Elapsed.TotalSeconds:F1} s");
        await using var cluster = await EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions());
        await using (var c = new NpgsqlConnection(cluster.ConnectionString))
        {
            await c.OpenAsync();
            Say($"server: {await ScalarAsync<string>(c, "SELECT version()")}; lz4: {await ScalarAsync<string>(c, "SELECT CASE WHEN EXISTS (SELECT 1 FROM pg_settings WHERE name = 'default_toast_compression' AND 'lz4' = ANY(enumvals)) THEN 'available' ELSE 'not built in' END")}");
        }

        var results = new List<string> { await TodayAsync(cluster, day, fleet, repeats) };
        if (!serviceOnly)
        {
            results.Add(await CompactAsync(cluster, day, fleet, repeats));
            results.Add(await ChunksAsync(cluster, day, fleet, repeats, perMinute: false, "lz4"));
            results.Add(await ChunksAsync(cluster, day, fleet, repeats, perMinute: false, "pglz"));
            results.Add(await ChunksAsync(cluster, day, fleet, repeats, perMinute: true, "none"));
            results.Add(await ChunksAsync(cluster, day, fleet, repeats, perMinute: true, "pglz"));
            results.Add(await ChunksAsync(cluster, day, fleet, repeats, perMinute: true, "lz4"));
        }

        Say($"");
        Say($"{"layout",-34} {"B/meas",7} {"load s",7} {"meas/s",8} {"read best",10} {"read median",12}");
        foreach (string line in results)
        {
            Console.WriteLine(line);
        }
    }

    // a: the service's migrations as they are, its ingest (MeasurementIngest), verdict writer and fused-state writer.
    private static async Task<string> TodayAsync(EmbeddedPostgres cluster, StorageProbeDay day, Guid fleet, int repeats)
    {
        const string schema = "probe_today";
        await new MigrationRunner(cluster.ConnectionString, schema).RunAsync();
        await using var dataSource = NpgsqlDataSource.Create(StorageSchema.WithSearchPath(cluster.ConnectionString, schema));
        await new PartitionMaintainer(dataSource).EnsurePartitionsAsync(DayOf(day.Measurements[0].TimeUs), DayOf(day.Measurements[^1].TimeUs));
        await using var connection = await dataSource.OpenConnectionAsync();
        await ExecuteAsync(connection, $"INSERT INTO fleets (fleet_id, name) VALUES ('{fleet:D}', 'storage probe')");
        var split = new double[3];
        var sw = Stopwatch.StartNew();
        foreach (var d in day.Deliveries)
        {
            long t = Stopwatch.GetTimestamp();
            var received = UnixMicroseconds.ToDateTimeUtc(d.ArrivalUs);
            var rows = new List<MeasurementRow>(d.To - d.From);
            for (int i = d.From; i < d.To; i++)
            {
                rows.Add(MeasurementRows.ToRow(fleet, Vehicle, day.Measurements[i], received));
            }

            await using (var tx = await connection.BeginTransactionAsync())
            {
                var (inserted, _) = await MeasurementIngest.InsertNewAsync(connection, tx, rows);
                await tx.CommitAsync();
                Check(inserted.Count == d.Fresh.Length, "service: ingest stored another count than the fresh rows");
            }

            split[0] += Stopwatch.GetElapsedTime(t).TotalSeconds;
            t = Stopwatch.GetTimestamp();
            if (d.Judged.Length > 0)
            {
                await MeasurementVerdictWriter.WriteAsync(dataSource, [.. d.Judged.Select(i => day.Verdicts[i])]);
            }

            split[1] += Stopwatch.GetElapsedTime(t).TotalSeconds;
            t = Stopwatch.GetTimestamp();
            if (d.StatesTo > d.StatesFrom)
            {
                await FusedStateWriter.WriteAsync(connection, null, new ArraySegment<FusedStateRow>(day.FusedStates, d.StatesFrom, d.StatesTo - d.StatesFrom));
            }

            split[2] += Stopwatch.GetElapsedTime(t).TotalSeconds;
        }

        double loadS = sw.Elapsed.TotalSeconds;
        Say($"a service: ingest {split[0]:F1} s, verdict writes {split[1]:F1} s, fused states {split[2]:F1} s");
        var reader = new TrackHistoryReader(dataSource);
        long fromUs = day.Measurements[0].TimeUs;
        long toUs = day.Measurements[^1].TimeUs + 1;
        var times = await TimeReadsAsync(day, repeats, async () =>
        {
            var list = new List<Measurement>(day.Measurements.Length);
            await reader.ReadReplayMeasurementsAsync(fleet, Vehicle, fromUs, toUs, 0, (short)SensorKind.Imu, s => list.Add(MeasurementRows.ToMeasurement(s)));
            return list;
        });
        return await ReportAsync(connection, schema, "a service (its migrations)", day, loadS, times);
    }

    // b: int surrogate key, time_us the only time column and the partition key, the verdict as columns of the row.
    private static async Task<string> CompactAsync(EmbeddedPostgres cluster, StorageProbeDay day, Guid fleet, int repeats)
    {
        const string schema = "probe_compact";
        await using var dataSource = NpgsqlDataSource.Create(StorageSchema.WithSearchPath(cluster.ConnectionString, schema));
        await using var connection = await dataSource.OpenConnectionAsync();
        await ExecuteAsync(connection, $"""
            CREATE SCHEMA {schema};
            SET search_path = {schema};
            CREATE TABLE vehicle_keys (
                vehicle_no integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
                fleet_id uuid NOT NULL, vehicle_id text NOT NULL, UNIQUE (fleet_id, vehicle_id));
            CREATE TABLE measurements (
                vehicle_no integer NOT NULL, kind smallint NOT NULL, outcome smallint NOT NULL,
                time_us bigint NOT NULL, message_key bigint NOT NULL, received_at timestamptz NOT NULL,
                v0 double precision NOT NULL, v1 double precision NULL, v2 real NOT NULL,
                nis double precision NULL, w0 real NULL, w1 real NULL, track_reset boolean NOT NULL DEFAULT false,
                PRIMARY KEY (vehicle_no, time_us, kind, message_key)) PARTITION BY RANGE (time_us);
            CREATE TABLE fused_states (
                vehicle_no integer NOT NULL, time_us bigint NOT NULL,
                lat_deg double precision NOT NULL, lon_deg double precision NOT NULL, heading_rad double precision NOT NULL,
                speed_mps double precision NOT NULL, yaw_rate_rps double precision NOT NULL, accel_mps2 double precision NOT NULL,
                gyro_bias_rps double precision NOT NULL, wheel_scale double precision NOT NULL,
                ellipse_major_m double precision NOT NULL, ellipse_minor_m double precision NOT NULL,
                ellipse_orientation_rad double precision NOT NULL, covariance bytea NOT NULL,
                PRIMARY KEY (vehicle_no, time_us)) PARTITION BY RANGE (time_us);
            {DailyPartitions(day, "measurements", "fused_states")}
            """);
        int vehicleNo = await ScalarAsync<int>(connection, $"INSERT INTO vehicle_keys (fleet_id, vehicle_id) VALUES ('{fleet:D}', '{Vehicle}') RETURNING vehicle_no");
        var split = new double[3];
        var sw = Stopwatch.StartNew();
        foreach (var d in day.Deliveries)
        {
            long t = Stopwatch.GetTimestamp();
            await using (var tx = await connection.BeginTransactionAsync())
            {
                await tx.SaveAsync("optimistic");
                try
                {
                    await CopyCompactAsync(connection, "measurements", vehicleNo, day, d);
                    await tx.ReleaseAsync("optimistic");
                }
                catch (PostgresException ex) when (ex.SqlState == UniqueViolation)
                {
                    await tx.RollbackAsync("optimistic");
                    await ExecuteAsync(connection, "CREATE TEMP TABLE IF NOT EXISTS compact_staging (LIKE measurements INCLUDING DEFAULTS) ON COMMIT DELETE ROWS");
                    await CopyCompactAsync(connection, "compact_staging", vehicleNo, day, d);
                    int stored = await ExecuteAsync(connection, "INSERT INTO measurements SELECT * FROM compact_staging ON CONFLICT DO NOTHING");
                    Check(stored == d.Fresh.Length, "compact: the careful path stored another count than the fresh rows");
                }

                await tx.CommitAsync();
            }

            split[0] += Stopwatch.GetElapsedTime(t).TotalSeconds;
            t = Stopwatch.GetTimestamp();
            if (d.Judged.Length > 0)
            {
                await using var update = new NpgsqlCommand(
                    "UPDATE measurements m SET outcome = u.o, nis = u.n, track_reset = u.r, w0 = u.w0, w1 = u.w1 "
                    + "FROM unnest($1::bigint[], $2::smallint[], $3::bigint[], $4::smallint[], $5::float8[], $6::boolean[], $7::real[], $8::real[]) "
                    + "AS u(t, k, mk, o, n, r, w0, w1) "
                    + "WHERE m.vehicle_no = $9 AND m.time_us = u.t AND m.kind = u.k AND m.message_key = u.mk",
                    connection);
                var v = d.Judged.Select(i => day.Verdicts[i]).ToArray();
                update.Parameters.Add(new NpgsqlParameter { Value = v.Select(x => x.Key.TimeUs).ToArray() });
                update.Parameters.Add(new NpgsqlParameter { Value = v.Select(x => x.Key.Kind).ToArray() });
                update.Parameters.Add(new NpgsqlParameter { Value = v.Select(x => x.Key.MessageKey).ToArray() });
                update.Parameters.Add(new NpgsqlParameter { Value = v.Select(x => OutcomeCodes.ToCode(x.Outcome)).ToArray() });
                update.Parameters.Add(new NpgsqlParameter { Value = v.Select(x => x.Nis).ToArray() });
                update.Parameters.Add(new NpgsqlParameter { Value = v.Select(x => x.TrackReset).ToArray() });
                update.Parameters.Add(new NpgsqlParameter { Value = v.Select(x => x.Whitened0).ToArray() });
                update.Parameters.Add(new NpgsqlParameter { Value = v.Select(x => x.Whitened1).ToArray() });
                update.Parameters.Add(new NpgsqlParameter { Value = vehicleNo });
                Check(await update.ExecuteNonQueryAsync() == v.Length, "compact: a verdict found no row");
            }

            split[1] += Stopwatch.GetElapsedTime(t).TotalSeconds;
            t = Stopwatch.GetTimestamp();
            if (d.StatesTo > d.StatesFrom)
            {
                await using var importer = await connection.BeginBinaryImportAsync(
                    "COPY fused_states (vehicle_no, time_us, lat_deg, lon_deg, heading_rad, speed_mps, yaw_rate_rps, accel_mps2, "
                    + "gyro_bias_rps, wheel_scale, ellipse_major_m, ellipse_minor_m, ellipse_orientation_rad, covariance) FROM STDIN (FORMAT BINARY)");
                for (int i = d.StatesFrom; i < d.StatesTo; i++)
                {
                    var s = day.FusedStates[i];
                    await importer.StartRowAsync();
                    await importer.WriteAsync(vehicleNo, NpgsqlDbType.Integer);
                    await importer.WriteAsync(s.TimeUs, NpgsqlDbType.Bigint);
                    foreach (double x in new[] { s.LatDeg, s.LonDeg, s.HeadingRad, s.SpeedMps, s.YawRateRps, s.AccelMps2, s.GyroBiasRps, s.WheelScale, s.EllipseMajorM, s.EllipseMinorM, s.EllipseOrientationRad })
                    {
                        await importer.WriteAsync(x, NpgsqlDbType.Double);
                    }

                    await importer.WriteAsync(ChunkCodec.PackCovariance(s.Covariance.Span), NpgsqlDbType.Bytea);
                }

                await importer.CompleteAsync();
            }

            split[2] += Stopwatch.GetElapsedTime(t).TotalSeconds;
        }

        double loadS = sw.Elapsed.TotalSeconds;
        Say($"b compact: ingest {split[0]:F1} s, verdict updates {split[1]:F1} s, fused states {split[2]:F1} s");
        long fromUs = day.Measurements[0].TimeUs;
        long toUs = day.Measurements[^1].TimeUs + 1;
        Func<Task<List<Measurement>>> read = async () =>
        {
            var list = new List<Measurement>(day.Measurements.Length);
            await using var c = await dataSource.OpenConnectionAsync();
            await using var tx = await c.BeginTransactionAsync();
            await ExecuteAsync(c, "SET LOCAL enable_seqscan = off; SET LOCAL enable_bitmapscan = off; SET LOCAL max_parallel_workers_per_gather = 0");
            await using (var export = await c.BeginBinaryExportAsync(string.Create(
                CultureInfo.InvariantCulture,
                $"COPY (SELECT kind, time_us, message_key, v0, v1, v2 FROM measurements WHERE vehicle_no = {vehicleNo} AND time_us >= {fromUs} AND time_us < {toUs} AND outcome <> 3 ORDER BY time_us, kind, message_key) TO STDOUT (FORMAT BINARY)")))
            {
                while (await export.StartRowAsync() != -1)
                {
                    short kind = await export.ReadAsync<short>();
                    long time = await export.ReadAsync<long>();
                    long key = await export.ReadAsync<long>();
                    double v0 = await export.ReadAsync<double>();
                    double v1 = double.NaN;
                    if (export.IsNull)
                    {
                        await export.SkipAsync();
                    }
                    else
                    {
                        v1 = await export.ReadAsync<double>();
                    }

                    float v2 = await export.ReadAsync<float>();
                    list.Add(Measurement.FromStored(time, Measurement.OrderKeyOf((SensorKind)(byte)kind, (ulong)key), v0, v1, v2));
                }
            }

            await tx.CommitAsync();
            return list;
        };
        var times = await TimeReadsAsync(day, repeats, read);
        string updated = await ReportAsync(connection, schema, "b compact key, verdict in row", day, loadS, times);
        // The same rows without the dead versions the verdict updates left: the floor of this row shape.
        await ExecuteAsync(connection, "VACUUM FULL measurements");
        await ExecuteAsync(connection, "VACUUM FULL fused_states");
        times = await TimeReadsAsync(day, repeats, read);
        Say($"b compact after VACUUM FULL (load time above, plus the rewrite):");
        return updated + "\n" + await ReportAsync(connection, schema, "b same, after VACUUM FULL", day, loadS, times);
    }

    private static async Task CopyCompactAsync(NpgsqlConnection connection, string table, int vehicleNo, StorageProbeDay day, StorageProbeDelivery d)
    {
        var received = UnixMicroseconds.ToDateTimeUtc(d.ArrivalUs);
        await using var importer = await connection.BeginBinaryImportAsync(
            $"COPY {table} (vehicle_no, kind, outcome, time_us, message_key, received_at, v0, v1, v2) FROM STDIN (FORMAT BINARY)");
        for (int i = d.From; i < d.To; i++)
        {
            Measurement m = day.Measurements[i];
            await importer.StartRowAsync();
            await importer.WriteAsync(vehicleNo, NpgsqlDbType.Integer);
            await importer.WriteAsync((short)m.Kind, NpgsqlDbType.Smallint);
            await importer.WriteAsync(OutcomeCodes.ToCode(FusionService.Estimation.Tracking.OutcomeKind.Pending), NpgsqlDbType.Smallint);
            await importer.WriteAsync(m.TimeUs, NpgsqlDbType.Bigint);
            await importer.WriteAsync((long)m.MessageKey, NpgsqlDbType.Bigint);
            await importer.WriteAsync(received, NpgsqlDbType.TimestampTz);
            await importer.WriteAsync(m.Value0, NpgsqlDbType.Double);
            if (double.IsNaN(m.Value1))
            {
                await importer.WriteNullAsync();
            }
            else
            {
                await importer.WriteAsync(m.Value1, NpgsqlDbType.Double);
            }

            await importer.WriteAsync(m.Value2, NpgsqlDbType.Real);
        }

        await importer.CompleteAsync();
    }

    // c: one row per vehicle and upload batch (as ingest writes it) or per vehicle and minute (as a compaction of
    // closed minutes would rewrite it), measurements and verdicts packed by ChunkCodec, fused states one row a minute.
    private static async Task<string> ChunksAsync(EmbeddedPostgres cluster, StorageProbeDay day, Guid fleet, int repeats, bool perMinute, string compression)
    {
        string schema = $"probe_chunks_{(perMinute ? "minute" : "batch")}_{compression}";
        string label = $"c chunk per {(perMinute ? "minute (rewrite)" : "batch")}, {compression}";
        long spanUs = perMinute ? 60_000_000 : StorageProbeDay.BatchUs;
        // Set on the parent and on every partition: a partition made before the ALTER keeps its own setting.
        var storage = new System.Text.StringBuilder();
        foreach (var (table, columns) in new[] { ("measurement_chunks", new[] { "payload", "verdicts" }), ("fused_chunks", new[] { "payload" }) })
        {
            foreach (string relation in PartitionNames(day, table).Prepend(table))
            {
                foreach (string column in columns)
                {
                    storage.Append(compression == "none"
                        ? $"ALTER TABLE {relation} ALTER COLUMN {column} SET STORAGE EXTERNAL;\n"
                        : $"ALTER TABLE {relation} ALTER COLUMN {column} SET COMPRESSION {compression};\n");
                }
            }
        }

        await using var dataSource = NpgsqlDataSource.Create(StorageSchema.WithSearchPath(cluster.ConnectionString, schema));
        await using var connection = await dataSource.OpenConnectionAsync();
        await ExecuteAsync(connection, $"""
            CREATE SCHEMA {schema};
            SET search_path = {schema};
            CREATE TABLE vehicle_keys (
                vehicle_no integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
                fleet_id uuid NOT NULL, vehicle_id text NOT NULL, UNIQUE (fleet_id, vehicle_id));
            CREATE TABLE measurement_chunks (
                vehicle_no integer NOT NULL, count integer NOT NULL, first_us bigint NOT NULL, last_us bigint NOT NULL,
                chunk_no bigint NOT NULL, payload bytea NOT NULL, verdicts bytea NULL,
                PRIMARY KEY (vehicle_no, first_us, chunk_no)) PARTITION BY RANGE (first_us);
            CREATE TABLE fused_chunks (
                vehicle_no integer NOT NULL, count integer NOT NULL, first_us bigint NOT NULL, last_us bigint NOT NULL,
                payload bytea NOT NULL, PRIMARY KEY (vehicle_no, first_us)) PARTITION BY RANGE (first_us);
            {DailyPartitions(day, "measurement_chunks", "fused_chunks")}
            {storage}
            """);
        int vehicleNo = await ScalarAsync<int>(connection, $"INSERT INTO vehicle_keys (fleet_id, vehicle_id) VALUES ('{fleet:D}', '{Vehicle}') RETURNING vehicle_no");
        var receivedUs = ReceivedTimes(day);
        var split = new double[3];
        var sw = Stopwatch.StartNew();
        if (perMinute)
        {
            // The compacted form: every closed minute of the vehicle rewritten as one row (built from the final store).
            long t = Stopwatch.GetTimestamp();
            await using (var importer = await connection.BeginBinaryImportAsync(
                "COPY measurement_chunks (vehicle_no, count, first_us, last_us, chunk_no, payload, verdicts) FROM STDIN (FORMAT BINARY)"))
            {
                long chunkNo = 0;
                foreach (var minute in Minutes(day.Measurements.Length, i => day.Measurements[i].TimeUs))
                {
                    await importer.StartRowAsync();
                    await importer.WriteAsync(vehicleNo, NpgsqlDbType.Integer);
                    await importer.WriteAsync(minute.Count, NpgsqlDbType.Integer);
                    await importer.WriteAsync(day.Measurements[minute[0]].TimeUs, NpgsqlDbType.Bigint);
                    await importer.WriteAsync(day.Measurements[minute[^1]].TimeUs, NpgsqlDbType.Bigint);
                    await importer.WriteAsync(chunkNo++, NpgsqlDbType.Bigint);
                    await importer.WriteAsync(ChunkCodec.EncodeMeasurements(day.Measurements, minute, [.. minute.Select(i => receivedUs[i])]), NpgsqlDbType.Bytea);
                    await importer.WriteAsync(ChunkCodec.EncodeVerdicts(day.Verdicts, minute), NpgsqlDbType.Bytea);
                }

                await importer.CompleteAsync();
            }

            split[0] += Stopwatch.GetElapsedTime(t).TotalSeconds;
            t = Stopwatch.GetTimestamp();
            await WriteFusedChunksAsync(connection, vehicleNo, day.FusedStates, 0, day.FusedStates.Length);
            split[2] += Stopwatch.GetElapsedTime(t).TotalSeconds;
        }
        else
        {
            var chunkOf = new int[day.Measurements.Length];
            var chunks = new List<(long FirstUs, long ChunkNo, int[] Indices)>();
            int fusedWritten = 0;
            foreach (var d in day.Deliveries)
            {
                long t = Stopwatch.GetTimestamp();
                // Duplicate detection: the keys of the stored chunks that can hold the batch's instants, read back.
                long minUs = day.Measurements[d.From].TimeUs;
                long maxUs = day.Measurements[d.To - 1].TimeUs;
                var stored = new HashSet<(long, ulong)>();
                await using (var lookup = new NpgsqlCommand(
                    "SELECT payload FROM measurement_chunks WHERE vehicle_no = $1 AND first_us > $2 AND first_us <= $3 AND last_us >= $4", connection))
                {
                    lookup.Parameters.Add(new NpgsqlParameter { Value = vehicleNo });
                    lookup.Parameters.Add(new NpgsqlParameter { Value = minUs - spanUs });
                    lookup.Parameters.Add(new NpgsqlParameter { Value = maxUs });
                    lookup.Parameters.Add(new NpgsqlParameter { Value = minUs });
                    await using var rows = await lookup.ExecuteReaderAsync();
                    while (await rows.ReadAsync())
                    {
                        ChunkCodec.DecodeMeasurements(rows.GetFieldValue<byte[]>(0), null, (time, key) => stored.Add((time, key)));
                    }
                }

                var fresh = new List<int>();
                for (int i = d.From; i < d.To; i++)
                {
                    if (!stored.Contains((day.Measurements[i].TimeUs, day.Measurements[i].OrderKey)))
                    {
                        fresh.Add(i);
                    }
                }

                Check(fresh.SequenceEqual(d.Fresh), "chunks: the key lookup found another set of fresh rows");
                if (fresh.Count > 0)
                {
                    long chunkNo = chunks.Count;
                    await using var insert = new NpgsqlCommand(
                        "INSERT INTO measurement_chunks (vehicle_no, count, first_us, last_us, chunk_no, payload) VALUES ($1, $2, $3, $4, $5, $6)", connection);
                    insert.Parameters.Add(new NpgsqlParameter { Value = vehicleNo });
                    insert.Parameters.Add(new NpgsqlParameter { Value = fresh.Count });
                    insert.Parameters.Add(new NpgsqlParameter { Value = day.Measurements[fresh[0]].TimeUs });
                    insert.Parameters.Add(new NpgsqlParameter { Value = day.Measurements[fresh[^1]].TimeUs });
                    insert.Parameters.Add(new NpgsqlParameter { Value = chunkNo });
                    insert.Parameters.Add(new NpgsqlParameter { Value = ChunkCodec.EncodeMeasurements(day.Measurements, fresh, [.. fresh.Select(i => d.ArrivalUs)]) });
                    await insert.ExecuteNonQueryAsync();
                    foreach (int i in fresh)
                    {
                        chunkOf[i] = chunks.Count;
                    }

                    chunks.Add((day.Measurements[fresh[0]].TimeUs, chunkNo, [.. fresh]));
                }

                split[0] += Stopwatch.GetElapsedTime(t).TotalSeconds;
                t = Stopwatch.GetTimestamp();
                if (d.Judged.Length > 0)
                {
                    // One UPDATE per chunk touched: its whole verdict array is written again.
                    await using var batch = new NpgsqlBatch(connection);
                    foreach (int c in d.Judged.Select(i => chunkOf[i]).Distinct())
                    {
                        var cmd = new NpgsqlBatchCommand("UPDATE measurement_chunks SET verdicts = $1 WHERE vehicle_no = $2 AND first_us = $3 AND chunk_no = $4");
                        cmd.Parameters.Add(new NpgsqlParameter { Value = ChunkCodec.EncodeVerdicts(day.Verdicts, chunks[c].Indices) });
                        cmd.Parameters.Add(new NpgsqlParameter { Value = vehicleNo });
                        cmd.Parameters.Add(new NpgsqlParameter { Value = chunks[c].FirstUs });
                        cmd.Parameters.Add(new NpgsqlParameter { Value = chunks[c].ChunkNo });
                        batch.BatchCommands.Add(cmd);
                    }

                    await batch.ExecuteNonQueryAsync();
                }

                split[1] += Stopwatch.GetElapsedTime(t).TotalSeconds;
                t = Stopwatch.GetTimestamp();
                // Fused states one row per closed minute (the minute of the newest state is still open).
                if (d.StatesTo > fusedWritten)
                {
                    long openMinute = MinuteOf(day.FusedStates[d.StatesTo - 1].TimeUs);
                    int end = fusedWritten;
                    while (end < d.StatesTo && MinuteOf(day.FusedStates[end].TimeUs) < openMinute)
                    {
                        end++;
                    }

                    if (end > fusedWritten)
                    {
                        await WriteFusedChunksAsync(connection, vehicleNo, day.FusedStates, fusedWritten, end);
                        fusedWritten = end;
                    }
                }

                split[2] += Stopwatch.GetElapsedTime(t).TotalSeconds;
            }

            long last = Stopwatch.GetTimestamp();
            await WriteFusedChunksAsync(connection, vehicleNo, day.FusedStates, fusedWritten, day.FusedStates.Length);
            split[2] += Stopwatch.GetElapsedTime(last).TotalSeconds;
        }

        double loadS = sw.Elapsed.TotalSeconds;
        Say($"{label}: measurements {split[0]:F1} s, verdicts {split[1]:F1} s, fused states {split[2]:F1} s; stored as: {await ScalarAsync<string>(connection, "SELECT string_agg(DISTINCT coalesce(pg_column_compression(payload), 'uncompressed'), ', ') FROM measurement_chunks")}");
        long fromUs = day.Measurements[0].TimeUs;
        long toUs = day.Measurements[^1].TimeUs + 1;
        var times = await TimeReadsAsync(day, repeats, async () =>
        {
            var list = new List<Measurement>(day.Measurements.Length);
            await using var c = await dataSource.OpenConnectionAsync();
            await using var read = new NpgsqlCommand(
                "SELECT payload FROM measurement_chunks WHERE vehicle_no = $1 AND first_us > $2 AND first_us < $3 ORDER BY first_us, chunk_no", c);
            read.Parameters.Add(new NpgsqlParameter { Value = vehicleNo });
            read.Parameters.Add(new NpgsqlParameter { Value = fromUs - spanUs });
            read.Parameters.Add(new NpgsqlParameter { Value = toUs });
            await using (var rows = await read.ExecuteReaderAsync())
            {
                while (await rows.ReadAsync())
                {
                    ChunkCodec.DecodeMeasurements(rows.GetFieldValue<byte[]>(0), list);
                }
            }

            list.RemoveAll(m => m.TimeUs < fromUs || m.TimeUs >= toUs);
            bool ordered = true;
            for (int i = 1; i < list.Count && ordered; i++)
            {
                ordered = list[i - 1].TimeUs < list[i].TimeUs || (list[i - 1].TimeUs == list[i].TimeUs && list[i - 1].OrderKey < list[i].OrderKey);
            }

            if (!ordered)
            {
                list.Sort((x, y) => x.TimeUs != y.TimeUs ? x.TimeUs.CompareTo(y.TimeUs) : x.OrderKey.CompareTo(y.OrderKey));
            }

            return list;
        });
        return await ReportAsync(connection, schema, label, day, loadS, times);
    }

    private static async Task WriteFusedChunksAsync(NpgsqlConnection connection, int vehicleNo, FusedStateRow[] states, int from, int to)
    {
        if (to <= from)
        {
            return;
        }

        await using var importer = await connection.BeginBinaryImportAsync(
            "COPY fused_chunks (vehicle_no, count, first_us, last_us, payload) FROM STDIN (FORMAT BINARY)");
        foreach (var minute in Minutes(to - from, i => states[from + i].TimeUs))
        {
            int a = from + minute[0];
            int b = from + minute[^1] + 1;
            await importer.StartRowAsync();
            await importer.WriteAsync(vehicleNo, NpgsqlDbType.Integer);
            await importer.WriteAsync(b - a, NpgsqlDbType.Integer);
            await importer.WriteAsync(states[a].TimeUs, NpgsqlDbType.Bigint);
            await importer.WriteAsync(states[b - 1].TimeUs, NpgsqlDbType.Bigint);
            await importer.WriteAsync(ChunkCodec.EncodeFusedStates(states, a, b), NpgsqlDbType.Bytea);
        }

        await importer.CompleteAsync();
    }

    /// <summary>Indices 0..count-1 grouped by UTC minute of their time (times ascending).</summary>
    private static IEnumerable<List<int>> Minutes(int count, Func<int, long> timeOf)
    {
        var current = new List<int>();
        for (int i = 0; i < count; i++)
        {
            if (current.Count > 0 && MinuteOf(timeOf(i)) != MinuteOf(timeOf(current[0])))
            {
                yield return current;
                current = [];
            }

            current.Add(i);
        }

        if (current.Count > 0)
        {
            yield return current;
        }
    }

    private static long MinuteOf(long timeUs) => Math.DivRem(timeUs, 60_000_000, out long r) - (r < 0 ? 1 : 0);

    /// <summary>When each measurement was received: the arrival of the upload that stored it.</summary>
    private static long[] ReceivedTimes(StorageProbeDay day)
    {
        var received = new long[day.Measurements.Length];
        foreach (var d in day.Deliveries)
        {
            foreach (int i in d.Fresh)
            {
                received[i] = d.ArrivalUs;
            }
        }

        return received;
    }

    private static async Task<List<double>> TimeReadsAsync(StorageProbeDay day, int repeats, Func<Task<List<Measurement>>> read)
    {
        var ms = new List<double>();
        for (int r = 0; r < repeats + 1; r++)
        {
            long t = Stopwatch.GetTimestamp();
            var list = await read();
            double elapsed = Stopwatch.GetElapsedTime(t).TotalMilliseconds;
            Check(list.SequenceEqual(day.Measurements), "a read gave back another day than the one stored");
            if (r > 0)
            {
                ms.Add(elapsed); // the first read warms the cache and is left out
            }
        }

        ms.Sort();
        return ms;
    }

    private static async Task<string> ReportAsync(NpgsqlConnection connection, string schema, string label, StorageProbeDay day, double loadS, List<double> readMs)
    {
        await ExecuteAsync(connection, "VACUUM ANALYZE");
        await using var sizes = new NpgsqlCommand(
            "SELECT coalesce(p.relname, c.relname) AS tbl, sum(pg_total_relation_size(c.oid))::bigint, sum(pg_relation_size(c.oid))::bigint, "
            + "sum(coalesce(pg_total_relation_size(nullif(c.reltoastrelid, 0)), 0))::bigint, sum(pg_indexes_size(c.oid))::bigint "
            + "FROM pg_class c LEFT JOIN pg_inherits i ON i.inhrelid = c.oid LEFT JOIN pg_class p ON p.oid = i.inhparent "
            + "WHERE c.relnamespace = $1::regnamespace AND c.relkind = 'r' GROUP BY 1 ORDER BY 2 DESC",
            connection);
        sizes.Parameters.Add(new NpgsqlParameter { Value = schema });
        long total = 0;
        double n = day.Measurements.Length;
        await using (var rows = await sizes.ExecuteReaderAsync())
        {
            while (await rows.ReadAsync())
            {
                long bytes = rows.GetInt64(1);
                total += bytes;
                if (bytes >= 1 << 20)
                {
                    Say($"  {schema}.{rows.GetString(0),-22} {bytes / n,7:F1} B/meas (heap {rows.GetInt64(2) / n:F1}, toast {rows.GetInt64(3) / n:F1}, indexes {rows.GetInt64(4) / n:F1}), {bytes / 1048576.0:F1} MiB");
                }
            }
        }

        Say($"  {schema} all tables: {total / n:F1} B/meas, {total / 1048576.0:F1} MiB; load {loadS:F1} s; read best {readMs[0]:F0} ms, median {readMs[readMs.Count / 2]:F0} ms");
        return string.Create(CultureInfo.InvariantCulture, $"{label,-34} {total / n,7:F1} {loadS,7:F1} {n / loadS,8:F0} {readMs[0],7:F0} ms {readMs[readMs.Count / 2],9:F0} ms");
    }

    private static string DailyPartitions(StorageProbeDay day, params string[] tables)
    {
        var sql = new System.Text.StringBuilder();
        for (DateOnly d = DayOf(day.Measurements[0].TimeUs); d <= DayOf(day.Measurements[^1].TimeUs); d = d.AddDays(1))
        {
            long from = UnixMicroseconds.StartOfUtcDay(d);
            long to = UnixMicroseconds.StartOfUtcDay(d.AddDays(1));
            foreach (string table in tables)
            {
                sql.Append(CultureInfo.InvariantCulture, $"CREATE TABLE {table}_p{d:yyyyMMdd} PARTITION OF {table} FOR VALUES FROM ({from}) TO ({to});\n");
            }
        }

        return sql.ToString();
    }

    private static IEnumerable<string> PartitionNames(StorageProbeDay day, string table)
    {
        for (DateOnly d = DayOf(day.Measurements[0].TimeUs); d <= DayOf(day.Measurements[^1].TimeUs); d = d.AddDays(1))
        {
            yield return string.Create(CultureInfo.InvariantCulture, $"{table}_p{d:yyyyMMdd}");
        }
    }

    private static DateOnly DayOf(long timeUs) => UnixMicroseconds.UtcDayOf(timeUs);

    private static async Task<int> ExecuteAsync(NpgsqlConnection connection, string sql)
    {
        await using var command = new NpgsqlCommand(sql, connection);
        return await command.ExecuteNonQueryAsync();
    }

    private static async Task<T> ScalarAsync<T>(NpgsqlConnection connection, string sql)
    {
        await using var command = new NpgsqlCommand(sql, connection);
        return (T)(await command.ExecuteScalarAsync())!;
    }

    private static void Check(bool condition, string what)
    {
        if (!condition)
        {
            throw new InvalidOperationException("storage probe: " + what);
        }
    }

    private static void Say(FormattableString line) => Console.WriteLine(line.ToString(CultureInfo.InvariantCulture));
}
