// Keys: 401 without or with an unknown key, 403 for a wrong role, 404 for another fleet's vehicles.
using System.Globalization;
using System.Net;
using FusionService.Tests.Infrastructure;
using Microsoft.Extensions.Configuration;

namespace FusionService.Tests.Security;

[Collection(ServiceTests.Name)]
public sealed class FleetAndRoleTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Fleets_see_only_their_own_vehicles_both_ways()
    {
        var a = await fixture.NewFleetAsync();
        var b = await fixture.NewFleetAsync();
        await fixture.Client(a.IngestKey).IngestOkAsync(StartingFixes.Two("shared-name"));
        await fixture.Client(a.IngestKey).IngestOkAsync(StartingFixes.Two("only-a"));
        await fixture.Client(b.IngestKey).IngestOkAsync(StartingFixes.Two("only-b"));
        await fixture.Host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);

        using var readA = fixture.Client(a.ReadKey);
        using var readB = fixture.Client(b.ReadKey);
        Assert.Equal(HttpStatusCode.NotFound, (await readB.GetAsync("/v1/vehicles/only-a/state")).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await readA.GetAsync("/v1/vehicles/only-b/state")).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await readB.GetAsync("/v1/vehicles/shared-name/state")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await readA.GetAsync("/v1/vehicles/shared-name/state")).StatusCode);
        string listA = await readA.GetStringAsync("/v1/vehicles");
        string listB = await readB.GetStringAsync("/v1/vehicles");
        Assert.DoesNotContain("only-b", listA, StringComparison.Ordinal);
        Assert.DoesNotContain("only-a", listB, StringComparison.Ordinal);
        Assert.Contains("only-b", listB, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Missing_or_unknown_keys_are_401()
    {
        using var none = fixture.Client(null);
        using var unknown = fixture.Client("fsk_not-a-key");
        Assert.Equal(HttpStatusCode.Unauthorized, (await none.PostJsonAsync(StartingFixes.Two("v"))).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await none.GetAsync("/v1/vehicles")).StatusCode);
        var response = await unknown.GetAsync("/v1/vehicles");
        Assert.Equal(HttpStatusCode.Unauthorized, response.StatusCode);
        Assert.Contains("unknown, revoked or expired", (await response.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Each_role_reaches_only_its_endpoints()
    {
        var fleet = await fixture.NewFleetAsync();
        using var ingest = fixture.Client(fleet.IngestKey);
        using var read = fixture.Client(fleet.ReadKey);
        using var admin = fixture.Client(fleet.AdminKey);
        Assert.Equal(HttpStatusCode.OK, (await ingest.PostJsonAsync(StartingFixes.Two("v1"))).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await read.PostJsonAsync(StartingFixes.Two("v1"))).StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await admin.PostJsonAsync(StartingFixes.Two("v1"))).StatusCode);
        var forbidden = await ingest.GetAsync("/v1/vehicles/v1/state");
        Assert.Equal(HttpStatusCode.Forbidden, forbidden.StatusCode);
        Assert.Contains("role read or admin", (await forbidden.ProblemAsync()).GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.Forbidden, (await ingest.GetAsync("/v1/vehicles")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await read.GetAsync("/v1/vehicles/v1/state")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await admin.GetAsync("/v1/vehicles/v1/state")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await read.GetAsync("/v1/vehicles")).StatusCode);
    }

    [Fact]
    public async Task Keys_command_creates_the_fleet_and_prints_a_working_secret_once()
    {
        string name = "cli-" + Guid.NewGuid().ToString("N", CultureInfo.InvariantCulture)[..10];
        var configuration = new Microsoft.Extensions.Configuration.ConfigurationBuilder()
            .AddInMemoryCollection(new Dictionary<string, string?> { ["ConnectionStrings:Fusion"] = fixture.ConnectionString })
            .Build();
        using var output = new StringWriter(CultureInfo.InvariantCulture);
        using var error = new StringWriter(CultureInfo.InvariantCulture);
        int code = await FusionService.Cli.KeysCommand.RunAsync(["keys", "create", "--fleet", name, "--role", "read", "--label", "ops"], configuration, output, error);
        Assert.Equal(0, code);
        string secret = output.ToString().Split('\n').Single(l => l.StartsWith("secret", StringComparison.Ordinal)).Split(' ')[^1].Trim();
        using var client = fixture.Client(secret);
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/v1/vehicles")).StatusCode);
        Assert.Equal(2, await FusionService.Cli.KeysCommand.RunAsync(["keys", "create", "--fleet", name, "--role", "root"], configuration, output, error));

        // Without a connection string, the command attaches to the embedded cluster a running service uses.
        var embedded = new Microsoft.Extensions.Configuration.ConfigurationBuilder()
            .AddInMemoryCollection(new Dictionary<string, string?> { ["Database:DataDirectory"] = fixture.DataDirectory })
            .Build();
        using var second = new StringWriter(CultureInfo.InvariantCulture);
        Assert.Equal(0, await FusionService.Cli.KeysCommand.RunAsync(["keys", "create", "--fleet", name, "--role", "ingest"], embedded, second, error));
        string ingestSecret = second.ToString().Split('\n').Single(l => l.StartsWith("secret", StringComparison.Ordinal)).Split(' ')[^1].Trim();
        Assert.Equal(HttpStatusCode.Forbidden, (await fixture.Client(ingestSecret).GetAsync("/v1/vehicles")).StatusCode);
        Assert.Equal(2, await fixture.CountAsync("SELECT count(*) FROM api_keys k JOIN fleets f USING (fleet_id) WHERE f.name = $1", name));
        Assert.Contains("--role must be ingest, read or admin", error.ToString(), StringComparison.Ordinal);
    }
}
