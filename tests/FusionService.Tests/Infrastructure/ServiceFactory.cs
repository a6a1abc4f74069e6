// The service hosted in-process on the test server, with its own Orleans ports.
using System.Globalization;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.Extensions.Configuration;

namespace FusionService.Tests.Infrastructure;

/// <summary>The service on the shared PostgreSQL server, with free Orleans ports and test limits.</summary>
public sealed class ServiceFactory(string connectionString, IReadOnlyDictionary<string, string?>? overrides = null) : WebApplicationFactory<Program>
{
    /// <summary>Limits the tests rely on.</summary>
    public const int MaxMessages = 500;

    /// <summary>Body limit the tests rely on, bytes.</summary>
    public const int MaxBodyBytes = 256 * 1024;

    protected override void ConfigureWebHost(IWebHostBuilder builder)
    {
        var settings = new Dictionary<string, string?>(StringComparer.Ordinal)
        {
            ["ConnectionStrings:Fusion"] = connectionString,
            ["Orleans:SiloPort"] = FreePort.Next().ToString(CultureInfo.InvariantCulture),
            ["Orleans:GatewayPort"] = "0",
            ["Ingest:MaxMessages"] = MaxMessages.ToString(CultureInfo.InvariantCulture),
            ["Ingest:MaxBodyBytes"] = MaxBodyBytes.ToString(CultureInfo.InvariantCulture),
            ["Ingest:MaxFutureSkewS"] = "60",

            // Read-your-writes, so that a test can read the state right after posting; AcknowledgeAfterCommitTests
            // covers the default.
            ["Ingest:AcknowledgeAfter"] = "Tracking",
            ["Security:RateLimitPermits"] = "100000",
            ["Security:FleetRateLimitPermits"] = "1000000",
            ["Security:FailedAuthPermits"] = "1000000",
            ["Security:MessageLimitPermits"] = "100000000",
            ["Security:FleetMessageLimitPermits"] = "100000000",
            ["Security:KeyCacheSeconds"] = "0",
            ["Serilog:MinimumLevel:Default"] = "Warning",
            // Webhook deliveries are tested on hosts of their own; the shared host leaves the outbox to them.
            ["Webhooks:DispatcherEnabled"] = "false",
            ["Alerts:SilenceScanIntervalMs"] = "500",
            // The start-up warm-up of the smoothing code would cost every test host CPU; SmoothingWarmUpTests turns it on.
            ["Tracks:WarmUpRounds"] = "0",
        };
        if (overrides is not null)
        {
            foreach (var pair in overrides)
            {
                settings[pair.Key] = pair.Value;
            }
        }

        builder.ConfigureAppConfiguration((_, configuration) => configuration.AddInMemoryCollection(settings));
    }
}
