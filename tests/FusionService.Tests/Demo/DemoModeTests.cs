// Demo mode: the service feeds the invented fleet through its own public API.
using System.Net;
using System.Net.Http.Headers;
using System.Security.Cryptography;
using System.Text.Json;
using FusionService.Storage.Fleets;
using FusionService.Tests.Infrastructure;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.Extensions.DependencyInjection;

namespace FusionService.Tests.Demo;

[Collection(ServiceTests.Name)]
public sealed class DemoModeTests(ServiceFixture fixture)
{
    [Fact]
    public async Task Demo_mode_creates_its_fleet_and_its_vans_appear_through_the_public_api()
    {
        string fleetName = "demo-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(6));
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?>
        {
            ["Demo:Enabled"] = "true",
            ["Demo:FleetName"] = fleetName,
            ["Demo:Vans"] = "8",
            ["Demo:Acceleration"] = "60",
            ["Demo:ProgressIntervalS"] = "3600",
        });
        host.UseKestrel(kestrel => kestrel.Listen(IPAddress.Loopback, 0));
        host.StartServer();
        string address = host.Services.GetRequiredService<IServer>().Features.Get<IServerAddressesFeature>()!.Addresses.First();

        var admin = new FleetAdmin(fixture.Store);
        Guid? fleetId = null;
        for (int i = 0; i < 120 && fleetId is null; i++)
        {
            fleetId = await admin.FindFleetAsync(fleetName);
            if (fleetId is null)
            {
                await Task.Delay(250);
            }
        }

        Assert.True(fleetId.HasValue, "demo mode did not create its fleet");
        var read = await admin.CreateApiKeyAsync(fleetId.Value, ApiKeyRole.Read, "test");
        using var client = new HttpClient { BaseAddress = new Uri(address) };
        client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", read.Secret);

        string[] vans = [];
        for (int i = 0; i < 180 && vans.Length < 3; i++)
        {
            using var response = await client.GetAsync("/v1/vehicles");
            Assert.Equal(HttpStatusCode.OK, response.StatusCode);
            using var body = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
            vans = [.. body.RootElement.GetProperty("vehicles").EnumerateArray().Select(v => v.GetProperty("vehicle").GetString()!)];
            if (vans.Length < 3)
            {
                await Task.Delay(500);
            }
        }

        Assert.True(vans.Length >= 3, $"only {vans.Length} demo vans have fused states");
        Assert.All(vans, v => Assert.StartsWith("van-", v, StringComparison.Ordinal));
    }
}
