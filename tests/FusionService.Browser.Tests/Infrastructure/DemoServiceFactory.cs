// The service with its demo fleet, hosted in-process on a real loopback socket for the browser.
using System.Globalization;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.Extensions.Configuration;

namespace FusionService.Browser.Tests.Infrastructure;

/// <summary>The service in demo mode (its own fleet, 8 vans at 60x) on the test's PostgreSQL server.</summary>
public sealed class DemoServiceFactory(string connectionString, string fleetName) : WebApplicationFactory<Program>
{
    /// <summary>The service's silence limit in these tests, seconds (<c>Alerts:SilentAfterS</c>; the default is 120).</summary>
    public const int SilentAfterS = 20;

    protected override void ConfigureWebHost(IWebHostBuilder builder)
    {
        var settings = new Dictionary<string, string?>(StringComparer.Ordinal)
        {
            ["ConnectionStrings:Fusion"] = connectionString,
            ["Orleans:SiloPort"] = FreePort.Next().ToString(CultureInfo.InvariantCulture),
            ["Orleans:GatewayPort"] = "0",
            ["Security:RateLimitPermits"] = "100000",
            ["Serilog:MinimumLevel:Default"] = "Warning",
            ["Demo:Enabled"] = "true",
            ["Demo:FleetName"] = fleetName,
            ["Demo:Vans"] = "8",
            ["Demo:Acceleration"] = "60",
            ["Demo:ProgressIntervalS"] = "3600",
            // The service's one silence limit, short so that a test sees a van fall silent within seconds (FreshnessTests).
            ["Alerts:SilentAfterS"] = SilentAfterS.ToString(CultureInfo.InvariantCulture),
        };
        builder.ConfigureAppConfiguration((_, configuration) => configuration.AddInMemoryCollection(settings));
    }
}
