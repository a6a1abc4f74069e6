// Idempotent ingest, bulk outcome updates, fused-state upserts, vehicle queries and migration 0002.
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Fleets;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using FusionService.Storage.Partitions;
using FusionService.Storage.Tests.Infrastructure;
using FusionService.Storage.Vehicles;
using Npgsql;

namespace FusionService.Storage.Tests.Measurements;

[Collection(PostgresCollection.Name)]
public sealed class MeasurementIngestTests(PostgresFixture server)
{
    private static MeasurementRow Row(Guid fleet, string vehicle, long timeUs, long key, short kind = 2) => new(
        fleet, vehicle, kind, timeUs, key, UnixMicroseconds.ToDateTimeUtc(timeUs + 1000), 1.5, null, null, 0,
        OutcomeKind.Pending, null, false);

    private Task<(TestSchema Schema, Guid Fleet)> NewStoreAsync() => server.NewFleetStoreAsync();

    private static Task<HashSet<MeasurementKey>> InsertAsync(TestSchema schema, IReadOnlyList<MeasurementRow> rows) =>
        MeasurementStores.CommitAsync(schema, rows);

    [Fact]
    public async Task Issue14_the_one_batch_returns_the_transaction_id_and_records_the_receipts()
    {
        // The receipts and the transaction id now go in the first batch of the insert (fewer round trips per commit).
        // The id must be the transaction's own: pg_current_xact_id() "returns the current transaction's ID" and assigns
        // one if it has none yet (PostgreSQL 15 documentation, 9.27.5 Transaction ID and Snapshot Information Functions).
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 9, 0, 0, 0);
        await using var connection = await schema.OpenAsync();
        MeasurementRow[][] calls = [[Row(fleet, "van-1", t, 1), Row(fleet, "van-1", t + 5, 2), Row(fleet, "van-2", t, 1)], []];
        foreach (var rows in calls)
        {
            await using var transaction = await connection.BeginTransactionAsync();
            var (_, transactionId) = await MeasurementIngest.InsertNewAsync(connection, transaction, rows);
            await using var own = new NpgsqlCommand("SELECT pg_current_xact_id()::text::bigint", connection, transaction);
            Assert.Equal((long)(await own.ExecuteScalarAsync())!, transactionId);
            await transaction.CommitAsync();
        }

        // One receipt per vehicle and kind, its measured time the newest of the call's rows.
        Assert.Equal(2L, await schema.ScalarAsync<long>("SELECT count(*) FROM vehicle_receipts"));
        Assert.Equal(
            UnixMicroseconds.ToDateTimeUtc(t + 5),
            await schema.ScalarAsync<DateTime>("SELECT last_measured_at FROM vehicle_receipts WHERE vehicle_id = 'van-1'"));
    }

    [Fact]
    public async Task Only_new_rows_are_inserted_and_reported_and_vehicles_are_created()
    {
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 9, 0, 0, 0);
        var first = await InsertAsync(schema, [Row(fleet, "van-1", t, 1), Row(fleet, "van-1", t, 2), Row(fleet, "van-2", t, 1)]);
        Assert.Equal(3, first.Count);
        // A retry of one stored row beside a new one, and the same new row twice in one call.
        var second = await InsertAsync(schema, [Row(fleet, "van-1", t, 2), Row(fleet, "van-1", t + 1, 3), Row(fleet, "van-1", t + 1, 3)]);
        Assert.Equal([new MeasurementKey(fleet, "van-1", 2, t + 1, 3)], second);
        Assert.Equal(4L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements"));
        var vehicles = new VehicleRepository(schema.DataSource);
        Assert.Equal(["van-1", "van-2"], await vehicles.ListAsync(fleet));
        Assert.True(await vehicles.ExistsAsync(fleet, "van-2"));
        Assert.False(await vehicles.ExistsAsync(Guid.NewGuid(), "van-2"));
    }

    [Fact]
    public async Task A_row_without_a_partition_stores_nothing_of_the_call()
    {
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 9, 0, 0, 0);
        long outside = TestTimes.At(TestTimes.Day.AddDays(20), 9, 0, 0, 0);
        await Assert.ThrowsAsync<PostgresException>(() => InsertAsync(schema, [Row(fleet, "van-1", t, 1), Row(fleet, "van-1", outside, 2)]));
        Assert.Equal(0L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements"));
    }

    [Fact]
    public async Task Verdicts_are_written_in_place_and_the_newest_of_a_measurement_is_the_one_read()
    {
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 10, 0, 0, 0);
        await InsertAsync(schema, [Row(fleet, "van-1", t, 1), Row(fleet, "van-1", t, 2), Row(fleet, "van-1", t, 3)]);
        var k1 = new MeasurementKey(fleet, "van-1", 2, t, 1);
        var k2 = new MeasurementKey(fleet, "van-1", 2, t, 2);
        Assert.Equal(2, await MeasurementVerdictWriter.WriteAsync(schema.DataSource,
        [
            new(k1, OutcomeKind.Gated, 12.5, false),
            new(k2, OutcomeKind.Initialising, null, false),
            new(k1, OutcomeKind.Accepted, 0.75, true),
        ]));

        // A later flush re-judges k2 (as a replay after late data would): it replaces the verdict in the chunk.
        Assert.Equal(1, await MeasurementVerdictWriter.WriteAsync(schema.DataSource, [new(k2, OutcomeKind.Accepted, 2.25, false)]));
        Assert.Equal(1L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurement_chunks"));
        Assert.Equal(1L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements WHERE outcome = 4"));

        // A verdict on a measurement that is not stored changes nothing.
        Assert.Equal(0, await MeasurementVerdictWriter.WriteAsync(schema.DataSource, [new(k1 with { MessageKey = 9 }, OutcomeKind.Accepted, 1.0, false)]));

        var rows = await new MeasurementRepository(schema.DataSource).ReadAsync(fleet, "van-1", t, t + 1);
        Assert.Equal((OutcomeKind.Accepted, 0.75, true), (rows[0].Outcome, rows[0].Nis!.Value, rows[0].TrackReset));
        Assert.Equal((OutcomeKind.Accepted, 2.25, false), (rows[1].Outcome, rows[1].Nis!.Value, rows[1].TrackReset));

        // A measurement without a verdict is pending, as it was stored.
        Assert.Equal((OutcomeKind.Pending, (double?)null, false), (rows[2].Outcome, rows[2].Nis, rows[2].TrackReset));
    }

    [Fact]
    public async Task Issue12_whitened_innovations_are_stored_with_the_latest_verdict()
    {
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 11, 0, 0, 0);
        await InsertAsync(schema, [Row(fleet, "van-1", t, 1), Row(fleet, "van-1", t, 2)]);
        var k1 = new MeasurementKey(fleet, "van-1", 2, t, 1);
        var k2 = new MeasurementKey(fleet, "van-1", 2, t, 2);
        await MeasurementVerdictWriter.WriteAsync(schema.DataSource,
        [
            new(k1, OutcomeKind.Accepted, 1.25, false) { Whitened0 = 0.5f, Whitened1 = -1.0f },
            new(k2, OutcomeKind.Initialising, null, false),
        ]);
        await MeasurementVerdictWriter.WriteAsync(schema.DataSource, [new(k1, OutcomeKind.Accepted, 4.0, false) { Whitened0 = -2.0f }]);

        var samples = new List<FusionService.Storage.Audit.VerdictSample>();
        await foreach (var sample in new FusionService.Storage.Audit.AuditRepository(schema.DataSource).VerdictsAsync(fleet, "van-1", t, t + 1))
        {
            samples.Add(sample);
        }

        // Exact in real: the values are small binary fractions.
        Assert.Equal(((float?)-2.0f, (float?)null), (samples[0].W0, samples[0].W1));
        Assert.Equal(((float?)null, (float?)null), (samples[1].W0, samples[1].W1));
    }

    [Fact]
    public async Task Transactions_creating_the_same_new_vehicles_in_opposite_orders_both_commit()
    {
        // Each of 20 rounds: two transactions store one row for each of 40 new vehicles, one in ascending and one in
        // descending vehicle order, at the same time. Vehicle rows inserted in the callers' orders would deadlock
        // (SQLSTATE 40P01) in some rounds; inserted in one order they only wait for each other.
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 13, 0, 0, 0);
        for (int round = 0; round < 20; round++)
        {
            var vehicles = Enumerable.Range(0, 40).Select(i => $"van-r{round}-{i:00}").ToList();
            var ascending = vehicles.Select((v, i) => Row(fleet, v, t + i, 1)).ToList();
            var descending = vehicles.AsEnumerable().Reverse().Select((v, i) => Row(fleet, v, t + i, 2)).ToList();
            using var start = new SemaphoreSlim(0, 2);
            var first = Task.Run(async () => { await start.WaitAsync(); return await InsertAsync(schema, ascending); });
            var second = Task.Run(async () => { await start.WaitAsync(); return await InsertAsync(schema, descending); });
            start.Release(2);
            var inserted = await Task.WhenAll(first, second);
            Assert.Equal((40, 40), (inserted[0].Count, inserted[1].Count));
        }

        Assert.Equal(800L, await schema.ScalarAsync<long>("SELECT count(*) FROM vehicles WHERE vehicle_id LIKE 'van-r%'"));
    }

    [Fact]
    public async Task A_batch_over_twenty_thousand_vans_stays_within_the_servers_lock_table()
    {
        // Each advisory lock takes a slot of the shared lock table, max_locks_per_transaction (64 by default) times the
        // allowed connections and prepared transactions (PostgreSQL 15 manual, section 20.12): about 6,400 here. One lock
        // per van would need 20,000 and fail ("out of shared memory"); the 128 vehicle buckets need at most 128.
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        Assert.Equal(64, await schema.ScalarAsync<int>("SELECT current_setting('max_locks_per_transaction')::int"));
        long t = TestTimes.At(TestTimes.Day, 14, 0, 0, 0);
        var rows = Enumerable.Range(0, 20_000).Select(i => Row(fleet, $"gateway-van-{i:00000}", t, 1)).ToList();

        Assert.Equal(20_000, (await InsertAsync(schema, rows)).Count);
        Assert.Equal(20_000L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements"));
    }

    [Fact]
    public async Task Two_commits_of_the_same_messages_at_once_store_them_once()
    {
        // The bucket lock makes the second commit read the keys after the first committed (READ COMMITTED sees it).
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 15, 0, 0, 0);
        for (int round = 0; round < 10; round++)
        {
            var rows = Enumerable.Range(0, 50).Select(i => Row(fleet, "van-twice", t + (round * 1_000_000L) + i, 1)).ToList();
            using var start = new SemaphoreSlim(0, 2);
            var first = Task.Run(async () => { await start.WaitAsync(); return await InsertAsync(schema, rows); });
            var second = Task.Run(async () => { await start.WaitAsync(); return await InsertAsync(schema, rows); });
            start.Release(2);
            var inserted = await Task.WhenAll(first, second);
            Assert.Equal(50, inserted[0].Count + inserted[1].Count);
        }

        Assert.Equal(500L, await schema.ScalarAsync<long>("SELECT count(*) FROM measurements WHERE vehicle_id = 'van-twice'"));
    }

    [Fact]
    public async Task Outcome_codes_0_to_8_are_admitted_and_nothing_above()
    {
        // The codes of migrations 0002 (5-7) and 0010 (8), kept by migration 0013's check on the verdict arrays.
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 11, 0, 0, 0);
        await InsertAsync(schema, [Row(fleet, "van-1", t, 1)]);
        Assert.Equal(8, await schema.ScalarAsync<int>("UPDATE measurement_chunks SET outcome = '{8}' WHERE true RETURNING outcome[1]::int"));
        await Assert.ThrowsAsync<PostgresException>(() => schema.ScalarAsync<int>("UPDATE measurement_chunks SET outcome = '{9}' WHERE true RETURNING outcome[1]::int"));
        await Assert.ThrowsAsync<PostgresException>(() => schema.ScalarAsync<int>("UPDATE measurement_chunks SET nis = '{-1}' WHERE true RETURNING 1"));
    }

    [Fact]
    public async Task Fused_state_upserts_replace_the_same_instant()
    {
        var (schema, fleet) = await NewStoreAsync();
        await using var _ = schema;
        long t = TestTimes.At(TestTimes.Day, 12, 0, 0, 0);
        FusedStateRow State(long timeUs, double lat) => new(fleet, "van-1", timeUs, lat, 7.0, 0.1, 5.0, 0.01, 0.2, 0.001, 1.01,
            Enumerable.Range(0, FusedStateRow.PackedCovarianceLength).Select(i => i * 0.5).ToArray(), 3.0, 2.0, 0.4);
        Assert.Equal(2, await FusedStateUpserter.UpsertAsync(schema.DataSource, [State(t, 45.0), State(t + 1, 45.1), State(t, 45.2)]));
        Assert.Equal(1, await FusedStateUpserter.UpsertAsync(schema.DataSource, [State(t + 1, 45.3)]));
        var rows = await new FusedStateRepository(schema.DataSource).ReadAsync(fleet, "van-1", t, t + 2);
        Assert.Equal([45.2, 45.3], rows.Select(r => r.LatDeg));
    }

    [Fact]
    public async Task Fleets_are_found_by_name()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var admin = new FleetAdmin(schema.DataSource);
        var id = await admin.CreateFleetAsync("north depot");
        Assert.Equal(id, await admin.FindFleetAsync("north depot"));
        Assert.Null(await admin.FindFleetAsync("south depot"));
    }
}
