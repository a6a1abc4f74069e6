// One PostgreSQL server, one service in demo mode and one headless browser for the browser tests.
using System.Net;
using System.Security.Cryptography;
using FusionService.Storage.Cluster;
using FusionService.Storage.Fleets;
using FusionService.Storage.Schemas;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.AspNetCore.TestHost;
using Microsoft.Extensions.DependencyInjection;
using Npgsql;
using OpenQA.Selenium.Chrome;

namespace FusionService.Browser.Tests.Infrastructure;

/// <summary>
/// Starts a throwaway embedded PostgreSQL cluster, the service with its demo fleet on a loopback port, a read key of the
/// demo fleet, and headless Debian chromium through chromedriver. A missing server or browser fails every test; nothing is
/// skipped.
/// </summary>
public sealed class DashboardFixture : IAsyncLifetime
{
    /// <summary>Debian's chromium (build.sh installs it).</summary>
    public const string ChromiumPath = "/usr/bin/chromium";

    /// <summary>Folder of Debian's chromedriver.</summary>
    public const string DriverFolder = "/usr/bin";

    private readonly string _dataDirectory = Path.Combine(Path.GetTempPath(), "fusion-browser-tests-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(6)));
    private readonly string _profileDirectory = Path.Combine(Path.GetTempPath(), "fusion-browser-profile-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(6)));
    private EmbeddedPostgres? _cluster;
    private DemoServiceFactory? _host;
    private NpgsqlDataSource? _store;

    /// <summary>The service's address, e.g. http://127.0.0.1:41234/.</summary>
    public Uri BaseAddress { get; private set; } = null!;

    /// <summary>A read key of the demo fleet.</summary>
    public string ReadKey { get; private set; } = string.Empty;

    /// <summary>An admin key of the demo fleet (acknowledging alerts needs one since issue 14).</summary>
    public string AdminKey { get; private set; } = string.Empty;

    /// <summary>The browser.</summary>
    public ChromeDriver Driver { get; private set; } = null!;

    /// <inheritdoc />
    public async Task InitializeAsync()
    {
        _cluster = await EmbeddedPostgres.StartAsync(new EmbeddedPostgresOptions
        {
            DataDirectory = _dataDirectory,
            NoSync = true,
            Port = FreePort.Next(),
        });
        string fleetName = "browser-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(6));
        _host = new DemoServiceFactory(_cluster.ConnectionString, fleetName);
        _host.UseKestrel(kestrel => kestrel.Listen(IPAddress.Loopback, 0));
        _host.StartServer();
        string address = _host.Services.GetRequiredService<IServer>().Features.Get<IServerAddressesFeature>()!.Addresses.First();
        BaseAddress = new Uri(address.EndsWith('/') ? address : address + "/");

        _store = NpgsqlDataSource.Create(StorageSchema.WithSearchPath(_cluster.ConnectionString, "fusion"));
        var admin = new FleetAdmin(_store);
        Guid? fleetId = null;
        for (int i = 0; i < 240 && fleetId is null; i++)
        {
            fleetId = await admin.FindFleetAsync(fleetName);
            if (fleetId is null)
            {
                await Task.Delay(250);
            }
        }

        if (fleetId is null)
        {
            throw new InvalidOperationException("demo mode did not create its fleet within 60 s");
        }

        ReadKey = (await admin.CreateApiKeyAsync(fleetId.Value, ApiKeyRole.Read, "browser test")).Secret;
        AdminKey = (await admin.CreateApiKeyAsync(fleetId.Value, ApiKeyRole.Admin, "browser test admin")).Secret;
        Driver = StartBrowser(_profileDirectory);
    }

    /// <summary>Creates a fleet of its own (apart from the demo's vans) with a read key and an ingest key.</summary>
    public async Task<OwnFleet> CreateOwnFleetAsync(string prefix)
    {
        var admin = new FleetAdmin(_store!);
        Guid id = await admin.CreateFleetAsync(prefix + "-" + Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(4)));
        string read = (await admin.CreateApiKeyAsync(id, ApiKeyRole.Read, "browser test reader")).Secret;
        string ingest = (await admin.CreateApiKeyAsync(id, ApiKeyRole.Ingest, "browser test trackers")).Secret;
        return new OwnFleet(BaseAddress, read, ingest);
    }

    /// <summary>Headless chromium with the options that work on the project's machines (see the platform notes).</summary>
    public static ChromeDriver StartBrowser(string profileDirectory)
    {
        if (!File.Exists(ChromiumPath) || !File.Exists(Path.Combine(DriverFolder, "chromedriver")))
        {
            throw new InvalidOperationException("Debian chromium and chromium-driver are needed (/usr/bin/chromium, /usr/bin/chromedriver); ./build.sh installs them");
        }

        var service = ChromeDriverService.CreateDefaultService(DriverFolder, "chromedriver");
        service.HideCommandPromptWindow = true;
        service.SuppressInitialDiagnosticInformation = true;
        var options = new ChromeOptions { BinaryLocation = ChromiumPath };
        options.AddArguments(
            "--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--disable-background-networking",
            "--disable-component-update", "--no-first-run", "--window-size=1400,900", "--user-data-dir=" + profileDirectory);
        var driver = new ChromeDriver(service, options, TimeSpan.FromSeconds(60));
        driver.Manage().Timeouts().AsynchronousJavaScript = TimeSpan.FromSeconds(30);
        return driver;
    }

    /// <inheritdoc />
    public async Task DisposeAsync()
    {
        Driver?.Quit();
        Driver?.Dispose();
        if (_host is not null)
        {
            await _host.DisposeAsync();
        }

        if (_store is not null)
        {
            await _store.DisposeAsync();
        }

        NpgsqlConnection.ClearAllPools();
        if (_cluster is not null)
        {
            await _cluster.DisposeAsync();
        }

        foreach (string folder in new[] { _profileDirectory, _dataDirectory })
        {
            if (Directory.Exists(folder))
            {
                Directory.Delete(folder, recursive: true);
            }
        }
    }
}
