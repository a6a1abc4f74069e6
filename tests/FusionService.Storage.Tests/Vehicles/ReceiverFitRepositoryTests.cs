// A new vehicle's receiver fit starts from the median of its fleet's fits, decided once (migration 0014).
using FusionService.Storage.Fleets;
using FusionService.Storage.Migrations;
using FusionService.Storage.Tests.Infrastructure;
using FusionService.Storage.Vehicles;

namespace FusionService.Storage.Tests.Vehicles;

[Collection(PostgresCollection.Name)]
public sealed class ReceiverFitRepositoryTests(PostgresFixture server)
{
    private const double MinTerms = 40;

    /// <summary>
    /// The median of an even count is the mean of the two middle values (PostgreSQL manual 9.21, percentile_cont), taken
    /// for the share and the time constant separately; fits on fewer own terms than the threshold, the vehicle's own
    /// fit and other fleets' fits do not count.
    /// </summary>
    [Fact]
    public async Task A_new_vehicle_starts_from_the_median_of_its_fleets_well_founded_fits()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var admin = new FleetAdmin(schema.DataSource);
        var fleet = await admin.CreateFleetAsync("receiver fleet");
        var other = await admin.CreateFleetAsync("other fleet");
        var fits = new ReceiverFitRepository(schema.DataSource);
        await fits.UpsertAsync(fleet, "van-a", 0.90, 100.0, 60);
        await fits.UpsertAsync(fleet, "van-b", 0.80, 140.0, 400);
        await fits.UpsertAsync(fleet, "van-c", 0.50, 20.0, 39.9);
        await fits.UpsertAsync(fleet, "van-d", 0.96, 90.0, 40);
        await fits.UpsertAsync(fleet, "van-e", 0.94, 130.0, 80);
        await fits.UpsertAsync(fleet, "van-new", 0.31, 11.0, 400);
        await fits.UpsertAsync(other, "van-x", 0.40, 15.0, 400);
        await AddVehiclesAsync(schema, fleet, "van-new");

        var start = await fits.DecideStartAsync(fleet, "van-new", 3, MinTerms);

        // Counted: a, b, d, e. Shares 0.80 0.90 0.94 0.96 -> (0.90 + 0.94) / 2; time constants 90 100 130 140 -> 115 s.
        Assert.Equal(new ReceiverStart(true, 0.92, 115.0), Round(start));
        Assert.Equal(Round(start), Round(await fits.StartOfAsync(fleet, "van-new")));
    }

    [Fact]
    public async Task A_start_is_decided_once_and_needs_enough_fitted_vehicles()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("small fleet");
        var fits = new ReceiverFitRepository(schema.DataSource);
        await AddVehiclesAsync(schema, fleet, "van-1", "van-2", "van-3");
        await fits.UpsertAsync(fleet, "van-a", 0.90, 100.0, 60);
        await fits.UpsertAsync(fleet, "van-b", 0.80, 140.0, 60);

        Assert.Equal(new ReceiverStart(false, null, null), await fits.StartOfAsync(fleet, "van-1"));
        // Two fitted vehicles of three needed: the configured pair, and that stays decided.
        Assert.Equal(new ReceiverStart(true, null, null), await fits.DecideStartAsync(fleet, "van-1", 3, MinTerms));
        await fits.UpsertAsync(fleet, "van-c", 0.70, 120.0, 60);
        Assert.Equal(new ReceiverStart(true, null, null), await fits.DecideStartAsync(fleet, "van-1", 3, MinTerms));
        // The next new vehicle finds three; one decided keeps its pair whatever the fleet fits later.
        Assert.Equal(new ReceiverStart(true, 0.8, 120.0), Round(await fits.DecideStartAsync(fleet, "van-2", 3, MinTerms)));
        await fits.UpsertAsync(fleet, "van-a", 0.35, 12.0, 400);
        Assert.Equal(new ReceiverStart(true, 0.8, 120.0), Round(await fits.DecideStartAsync(fleet, "van-2", 3, MinTerms)));
        // 0 vehicles turns the fleet start off.
        Assert.Equal(new ReceiverStart(true, null, null), await fits.DecideStartAsync(fleet, "van-3", 0, MinTerms));
        // An unknown vehicle has no start and gets none.
        Assert.Null(await fits.DecideStartAsync(fleet, "van-unknown", 3, MinTerms));
    }

    /// <summary>Vehicles stored before migration 0014 started from the configured pair: they are decided, without one.</summary>
    [Fact]
    public async Task Vehicles_stored_before_the_migration_keep_the_configured_start()
    {
        await using var schema = await server.NewEmptySchemaAsync();
        var all = EmbeddedMigrations.Load();
        await new MigrationRunner(server.ConnectionString, schema.Name, null, all.Where(m => string.CompareOrdinal(m.Version, "0014") < 0)).RunAsync();
        var fleet = await new FleetAdmin(schema.DataSource).CreateFleetAsync("older fleet");
        await AddVehiclesAsync(schema, fleet, "van-old");

        var applied = await new MigrationRunner(server.ConnectionString, schema.Name, null, all).RunAsync();

        Assert.Contains("0014_receiver_start", applied);
        Assert.Equal(new ReceiverStart(true, null, null), await new ReceiverFitRepository(schema.DataSource).StartOfAsync(fleet, "van-old"));
    }

    private static async Task AddVehiclesAsync(TestSchema schema, Guid fleet, params string[] vehicles)
    {
        foreach (string vehicle in vehicles)
        {
            await schema.ScalarAsync<int>("INSERT INTO vehicles (fleet_id, vehicle_id) VALUES ($1, $2) RETURNING 1", fleet, vehicle);
        }
    }

    // The medians are computed in floating point: compared at 1e-9 of the share and 1e-9 s.
    private static ReceiverStart? Round(ReceiverStart? start) =>
        start is { } s ? s with { Share = s.Share is { } f ? Math.Round(f, 9) : null, TimeConstantS = s.TimeConstantS is { } t ? Math.Round(t, 9) : null } : null;
}
