// The fault harness of issue 13: three service processes in one cluster on one PostgreSQL, a client that resends until
// every message is acknowledged, and four faults; after each, nothing acknowledged is lost and every track is exact.
using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Security.Cryptography;
using System.Text.Json;
using System.Text.Json.Nodes;
using FusionService.Alerts;
using FusionService.Estimation.Measurements;
using FusionService.Ingest;
using FusionService.Storage.Measurements;
using FusionService.Tests.Infrastructure;
using FusionService.Vehicles;
using Npgsql;
using Xunit.Abstractions;

namespace FusionService.Tests.Resilience;

/// <summary>
/// Issue 13, item 3. Real OS processes (<see cref="ServiceProcess"/>, <c>Orleans:ClusterMode=Postgres</c>, the run's
/// PostgreSQL) and an <see cref="AcknowledgingClient"/> posting four vehicles' drives with 4 requests in flight, each
/// vehicle's batches in order and spread over the three processes. Four phases, each with its own fleet and vehicles:
/// (a) kill -9 of the process holding a vehicle mid-stream, started again with the same command; (b) a clean stop
/// (SIGTERM) of one mid-stream, started again; (c) PostgreSQL stopped for 15 s mid-stream and started again: answers
/// are 503 with Retry-After, never 500, and the processes recover without a restart; (d) a poison measurement: one
/// refused at the door among valid ones, and one already stored (a GNSS fix with an accuracy of 1e50 m, as stored
/// before the ingest bounds) that a restarted track meets in its replay. After each phase: every acknowledged message
/// is stored exactly once, no stored measurement is pending once the tracks settle, and each vehicle's state equals,
/// bit for bit, the estimation core run uninterrupted on the same messages (<see cref="TrackOracle"/>).
/// </summary>
[Collection(ServiceTests.Name)]
[Trait("Category", "FaultHarness")]
public sealed class FaultHarnessTests(ServiceFixture fixture, ITestOutputHelper output)
{
    private const int VehiclesPerPhase = 4;
    private const int BatchSize = 40;
    private static readonly TimeSpan SettleBound = TimeSpan.FromSeconds(90);

    [Fact]
    public async Task Issue13_three_processes_lose_nothing_through_kill_stop_outage_and_poison()
    {
        var clock = Stopwatch.StartNew();
        string clusterId = "faults-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(4));
        var environment = ServiceProcess.Cluster(clusterId);
        environment["Security__RateLimitPermits"] = "10000000";
        // Restores, rebuilds and catch-ups are logged at Information and Debug: a failing run then says which happened.
        environment["Serilog__MinimumLevel__Override__FusionService.Tracking"] = "Debug";
        var services = Enumerable.Range(0, 3).Select(_ => ServiceProcess.Start(fixture.ConnectionString, output, environment)).ToList();
        try
        {
            await Task.WhenAll(services.Select(s => s.WaitUntilReadyAsync()));
            output.WriteLine($"3 processes ready after {clock.Elapsed.TotalSeconds:F1} s");

            // (a) Vehicle 0's first batch goes to process 0, whose silo then hosts its track (PreferLocalPlacement).
            await RunPhaseAsync("kill", services, 1301, async client =>
            {
                await client.When(c => c.Fraction >= 0.3);
                double at = client.Fraction;
                await services[0].KillAsync();
                services[0].StartAgain();
                await services[0].WaitUntilReadyAsync();
                return at;
            });
            output.WriteLine($"(a) kill -9 done after {clock.Elapsed.TotalSeconds:F1} s");

            // (b) Vehicle 1's first batch goes to process 1.
            await RunPhaseAsync("stop", services, 1302, async client =>
            {
                await client.When(c => c.Fraction >= 0.3);
                double at = client.Fraction;
                await services[1].StopAsync();
                services[1].StartAgain();
                await services[1].WaitUntilReadyAsync();
                return at;
            });
            output.WriteLine($"(b) clean stop done after {clock.Elapsed.TotalSeconds:F1} s");

            // (c) The database goes away for 15 s (the outage itself, not a wait for anything).
            var outage = await RunPhaseAsync("outage", services, 1303, async client =>
            {
                await client.When(c => c.Fraction >= 0.3);
                double at = client.Fraction;
                await fixture.StopServerAsync();
                try
                {
                    await Task.Delay(TimeSpan.FromSeconds(15));
                    using var probe = services[2].Client(null);
                    using var ready = await probe.GetAsync("/health/ready");
                    Assert.Equal(HttpStatusCode.ServiceUnavailable, ready.StatusCode);
                }
                finally
                {
                    await fixture.StartServerAsync();
                }

                return at;
            });
            Assert.True(outage.Statuses.GetValueOrDefault(503) > 0, "no 503 during the outage: the fault did not reach the client");
            Assert.Equal(0, outage.WithoutRetryAfter);

            // Recovered without a restart: every process is ready again, the same processes as before.
            await Task.WhenAll(services.Select(s => s.WaitUntilReadyAsync()));
            Assert.All(services, s => Assert.False(s.Process.HasExited));
            output.WriteLine($"(c) outage done after {clock.Elapsed.TotalSeconds:F1} s");

            await RunPoisonPhaseAsync(services);
            output.WriteLine($"(d) poison done after {clock.Elapsed.TotalSeconds:F1} s");
        }
        finally
        {
            foreach (var s in services)
            {
                s.Dispose();
            }
        }
    }

    /// <summary>Streams a phase's vehicles while <paramref name="fault"/> runs, then checks the phase.</summary>
    private async Task<AcknowledgingClient> RunPhaseAsync(
        string name, List<ServiceProcess> services, int seed, Func<AcknowledgingClient, Task<double>> fault,
        Func<TestFleet, List<(string Vehicle, TelemetryDrive Drive)>, AcknowledgingClient, Task>? during = null,
        Func<TestFleet, Task>? afterStream = null, IReadOnlyDictionary<string, Measurement>? stored = null)
    {
        var fleet = await fixture.NewFleetAsync();
        var drives = Enumerable.Range(0, VehiclesPerPhase)
            .Select(v => ("van-" + name + "-" + v.ToString(CultureInfo.InvariantCulture), (TelemetryDrive?)null))
            .Select((x, v) => (x.Item1, TelemetryDrive.Create(x.Item1, TelemetryDrive.StartUs(TimeSpan.FromMinutes(9)), seed * 10 + v)))
            .ToList();
        var client = new AcknowledgingClient(services, fleet.IngestKey);
        var stream = client.RunAsync(drives, BatchSize);
        var faulted = fault(client);
        var extra = during?.Invoke(fleet, drives, client) ?? Task.CompletedTask;
        await Task.WhenAll(stream, faulted, extra);
        double at = await faulted;
        output.WriteLine($"phase {name}: fault at {at:P0} acknowledged; statuses {string.Join(", ", client.Statuses.OrderBy(s => s.Key).Select(s => s.Key + "x" + s.Value))}; {client.ConnectionFailures} connection failures");
        Assert.True(at < 1, "the fault came after the stream had ended");
        Assert.DoesNotContain(client.Statuses.Keys, s => s >= 500 && s != 503);
        if (afterStream is not null)
        {
            await afterStream(fleet);
        }

        await CheckAsync(fleet, drives, client, services, stored ?? new Dictionary<string, Measurement>());
        return client;
    }

    /// <summary>
    /// (d): while vehicle 0 streams, a poison fix is stored straight into the store just ahead of its acknowledged data
    /// (no track is handed it), and a fix with accuracy_m 1e50 is posted among valid messages (refused by name). After
    /// the stream, process 0 (the track's host) stops cleanly and starts again; the next read activates the track,
    /// whose replay from its checkpoint meets the stored poison: judged unusable (8), alerted, skipped.
    /// </summary>
    private async Task RunPoisonPhaseAsync(List<ServiceProcess> services)
    {
        var stored = new Dictionary<string, Measurement>(StringComparer.Ordinal);
        Guid fleetId = Guid.Empty;
        await RunPhaseAsync(
            "poison",
            services,
            1304,
            client => Task.FromResult(0.0),
            during: async (fleet, drives, client) =>
            {
                fleetId = fleet.Id;
                var (vehicle, drive) = drives[0];
                await client.When(c => c.AcknowledgedOf(vehicle) >= drive.Messages.Count * 4 / 5);
                int next = client.AcknowledgedOf(vehicle);
                var anchor = drive.Messages.Take(next).SelectMany(m => m.Core).Last(m => m.Kind == SensorKind.GnssPosition);
                long timeUs = drive.Messages[next].Core.Min(m => m.TimeUs) - 1;
                var poison = Measurement.FromStored(
                    timeUs, Measurement.OrderKeyOf(SensorKind.GnssPosition, MessageKeys.FromId("stored-poison")), anchor.AsGnssFix().LatitudeDeg, anchor.AsGnssFix().LongitudeDeg, float.PositiveInfinity);
                await fixture.StoreWithoutTrackAsync([MeasurementRows.ToRow(fleet.Id, vehicle, poison, DateTime.UtcNow) with { V2 = 1e50 }]);
                stored[vehicle] = poison;

                // Among valid messages: two wheel samples of another vehicle of the fleet, at instants its drive has no wheel sample.
                var door = drives[1];
                long t = ((door.Drive.Messages[^1].Core.Max(m => m.TimeUs) / 1000) + 500) * 1000;
                var body = new JsonArray(
                    Wheel(door.Vehicle, t, "door-ok-1"),
                    new JsonObject { ["vehicle"] = door.Vehicle, ["kind"] = "gnss", ["time"] = (t / 1000) + 1000, ["id"] = "door-poison", ["lat_deg"] = anchor.Value0, ["lon_deg"] = anchor.Value1, ["accuracy_m"] = 1e50 },
                    Wheel(door.Vehicle, t + 2_000_000, "door-ok-2"));
                var answer = await client.PostUntilAnsweredAsync(body.ToJsonString(), first: 1);
                Assert.Equal(["accepted", "rejected", "accepted"], answer.Results.Select(r => r.Status));
                Assert.Equal("accuracy_m", answer.Results[1].Field);
                stored[door.Vehicle + "/door-ok-1"] = Measurement.WheelSpeed(t, MessageKeys.FromId("door-ok-1"), 5.0);
                stored[door.Vehicle + "/door-ok-2"] = Measurement.WheelSpeed(t + 2_000_000, MessageKeys.FromId("door-ok-2"), 5.0);
            },
            afterStream: async fleet =>
            {
                await services[0].StopAsync();
                services[0].StartAgain();
                await services[0].WaitUntilReadyAsync();
            },
            stored: stored);

        var poison = stored["van-poison-0"];
        Assert.Equal(8, await fixture.CountAsync(
            "SELECT outcome FROM " + JudgedSql.OfFleet + " WHERE kind = $2 AND time_us = $3 AND message_key = $4",
            fleetId, (short)poison.Kind, poison.TimeUs, (long)poison.MessageKey));
        Assert.Equal(1, await fixture.CountAsync(
            "SELECT count(*) FROM alerts WHERE fleet_id = $1 AND vehicle_id = $2 AND kind = $3", fleetId, "van-poison-0", AlertKinds.MeasurementUnusable));
    }

    private static JsonObject Wheel(string vehicle, long timeUs, string id) =>
        new() { ["vehicle"] = vehicle, ["kind"] = "wheel", ["time"] = timeUs / 1000, ["id"] = id, ["speed_mps"] = 5.0 };

    /// <summary>
    /// Every message acknowledged and stored exactly once (the stored keys of each vehicle are its messages' keys, plus
    /// <paramref name="extra"/>), none pending once the tracks settle, every state equal to the uninterrupted run's.
    /// </summary>
    private async Task CheckAsync(
        TestFleet fleet, List<(string Vehicle, TelemetryDrive Drive)> drives, AcknowledgingClient client, List<ServiceProcess> services,
        IReadOnlyDictionary<string, Measurement> extra)
    {
        var acknowledged = client.Acknowledged.ToHashSet(StringComparer.Ordinal);
        Assert.Equal(drives.Sum(d => d.Drive.Messages.Count), acknowledged.Count);
        Assert.All(drives, d => Assert.All(d.Drive.Messages, m => Assert.Contains(d.Vehicle + "/" + (string)m.Message["id"]!, acknowledged)));
        foreach (var (vehicle, drive) in drives)
        {
            var expected = drive.Messages.SelectMany(m => m.Core)
                .Concat(extra.Where(e => e.Key == vehicle || e.Key.StartsWith(vehicle + "/", StringComparison.Ordinal)).Select(e => e.Value))
                .Select(m => ((short)m.Kind, m.TimeUs, (long)m.MessageKey))
                .Order()
                .ToList();
            Assert.Equal(expected, await StoredKeysAsync(fleet.Id, vehicle));
        }

        // A read activates a track that is not active (after a stop, its replay judges what it had not seen), so the
        // states settle first, then the verdicts.
        var settle = Stopwatch.StartNew();
        using var read = services[2].Client(fleet.ReadKey);
        foreach (var (vehicle, drive) in drives)
        {
            var oracle = new TrackOracle();
            var all = drive.Messages.Select(m => m.Core)
                .Concat(extra.Where(e => e.Key == vehicle || e.Key.StartsWith(vehicle + "/", StringComparison.Ordinal)).Select(e => new[] { e.Value }))
                .OrderBy(core => core.Min(m => m.TimeUs))
                .ToList();
            oracle.Process(all);
            var expected = oracle.Response(vehicle);
            VehicleStateResponse? actual = null;
            while (settle.Elapsed < SettleBound)
            {
                using var response = await read.GetAsync("/v1/vehicles/" + vehicle + "/state");
                if (response.StatusCode == HttpStatusCode.OK)
                {
                    actual = JsonSerializer.Deserialize<VehicleStateResponse>(await response.Content.ReadAsStringAsync(), Api.Json);
                    if (Equals(actual, expected))
                    {
                        break;
                    }
                }

                await Task.Delay(200);
            }

            if (!Equals(actual, expected))
            {
                await DescribeOutcomesAsync(fleet.Id, vehicle);
            }

            Assert.Equal(expected, actual);
        }

        long pending;
        while ((pending = await fixture.CountAsync("SELECT count(*) FROM " + JudgedSql.OfFleet + " WHERE outcome = 4", fleet.Id)) > 0 && settle.Elapsed < SettleBound)
        {
            await Task.Delay(200);
        }

        Assert.Equal(0, pending);
        output.WriteLine($"settled in {settle.Elapsed.TotalSeconds:F1} s");
    }

    /// <summary>Writes a vehicle's verdicts by outcome, and its too-late and pending ones, to the test output.</summary>
    private async Task DescribeOutcomesAsync(Guid fleetId, string vehicle)
    {
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new NpgsqlCommand(
            "SELECT outcome, count(*), min(time_us), max(time_us) FROM " + JudgedSql.OfVehicle + " GROUP BY outcome ORDER BY outcome", connection);
        command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
        command.Parameters.Add(new NpgsqlParameter { Value = vehicle });
        await using var reader = await command.ExecuteReaderAsync();
        while (await reader.ReadAsync())
        {
            output.WriteLine($"{vehicle}: outcome {reader.GetInt16(0)} x{reader.GetInt64(1)}, times {reader.GetInt64(2)}..{reader.GetInt64(3)}");
        }
    }

    private async Task<List<(short, long, long)>> StoredKeysAsync(Guid fleetId, string vehicle)
    {
        await using var connection = await fixture.Store.OpenConnectionAsync();
        await using var command = new NpgsqlCommand(
            "SELECT kind, time_us, message_key FROM measurements WHERE fleet_id = $1 AND vehicle_id = $2 ORDER BY kind, time_us, message_key", connection);
        command.Parameters.Add(new NpgsqlParameter { Value = fleetId });
        command.Parameters.Add(new NpgsqlParameter { Value = vehicle });
        var keys = new List<(short, long, long)>();
        await using var reader = await command.ExecuteReaderAsync();
        while (await reader.ReadAsync())
        {
            keys.Add((reader.GetInt16(0), reader.GetInt64(1), reader.GetInt64(2)));
        }

        return keys;
    }
}
