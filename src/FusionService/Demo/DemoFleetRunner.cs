using FusionService.Database;
using FusionService.Simulator.Feeding;
using FusionService.Simulator.Fleet;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.Extensions.Options;

namespace FusionService.Demo;

/// <summary>
/// <c>demo</c> mode: once the service listens, creates (or reuses) the demo fleet, prints fresh ingest and read keys,
/// and feeds the invented fleet's telemetry into the service over its own public API, exactly as trackers would.
/// </summary>
public sealed partial class DemoFleetRunner(
    FusionDatabase database,
    IServer server,
    IHostApplicationLifetime lifetime,
    IOptions<DemoOptions> options,
    ILogger<DemoFleetRunner> logger) : BackgroundService
{
    /// <inheritdoc />
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        if (!options.Value.Enabled || !await WaitForStartAsync(stoppingToken).ConfigureAwait(false))
        {
            return;
        }

        DemoOptions demo = options.Value;
        Uri baseUrl = ListeningAddress();
        var admin = new FleetAdmin(database.DataSource);
        Guid fleetId = await admin.FindFleetAsync(demo.FleetName, stoppingToken).ConfigureAwait(false)
            ?? await admin.CreateFleetAsync(demo.FleetName, stoppingToken).ConfigureAwait(false);
        CreatedApiKey ingest = await admin.CreateApiKeyAsync(fleetId, ApiKeyRole.Ingest, "demo trackers", stoppingToken).ConfigureAwait(false);
        CreatedApiKey read = await admin.CreateApiKeyAsync(fleetId, ApiKeyRole.Read, "demo reader", stoppingToken).ConfigureAwait(false);
        CreatedApiKey operate = await admin.CreateApiKeyAsync(fleetId, ApiKeyRole.Admin, "demo admin", stoppingToken).ConfigureAwait(false);

        var fleet = new DemoFleet(new DemoFleetOptions { VanCount = demo.Vans, Seed = demo.Seed });
        long durationUs = fleet.Vans.Max(v => v.Truth.EndTimeUs) - fleet.Vans.Min(v => v.Truth.StartTimeUs);
        long nowUs = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000;

        // Live at 1x, begun HeadStartMinutes ago (that backlog goes at once); faster than that, the day ends now. Either
        // way no measurement lies in the future.
        bool live = demo.Acceleration <= 1.0;
        long headStartUs = (long)Math.Round(demo.HeadStartMinutes * 60e6);
        long startUs = live ? nowUs - headStartUs : nowUs - durationUs;
        fleet = new DemoFleet(new DemoFleetOptions { VanCount = demo.Vans, Seed = demo.Seed, StartTimeUs = startUs });

        Console.Out.WriteLine();
        string pace = live ? $"live, the first {demo.HeadStartMinutes:0.#} min uploaded at once" : $"{demo.Acceleration:0.#}x";
        Console.Out.WriteLine($"FusionService demo: fleet '{demo.FleetName}', {fleet.Vans.Count} vans, {pace}, uploads over {demo.Transport}");
        Console.Out.WriteLine($"  service        {baseUrl}");
        Console.Out.WriteLine($"  dashboard      {baseUrl} (sign in with the read key, or the admin key to acknowledge alerts)");
        Console.Out.WriteLine($"  API docs       {new Uri(baseUrl, "swagger")}");
        Console.Out.WriteLine($"  read key       {read.Secret}");
        Console.Out.WriteLine($"  admin key      {operate.Secret} (acknowledges alerts; manages webhooks)");
        Console.Out.WriteLine($"  ingest key     {ingest.Secret}");
        Console.Out.WriteLine($"  try            curl -H 'Authorization: Bearer {read.Secret}' {new Uri(baseUrl, "v1/vehicles")}");
        foreach (DemoFault fault in fleet.Faults)
        {
            Console.Out.WriteLine($"  fault          {fault.VehicleId ?? "any van"}: {fault.Description}");
        }

        Console.Out.WriteLine("  Positions are estimates, not for safety-critical navigation; the data is invented. Ctrl-C stops.");
        Console.Out.WriteLine();

        using var http = new HttpClient { BaseAddress = baseUrl, Timeout = TimeSpan.FromSeconds(60) };
        var feeder = new FleetFeeder(http, new FleetFeederOptions
        {
            BaseUrl = baseUrl,
            ApiKey = ingest.Secret,
            Transport = demo.Transport,
            AccelerationFactor = demo.Acceleration,
            PaceFromUs = live ? nowUs : null,
            ProgressInterval = TimeSpan.FromSeconds(demo.ProgressIntervalS),
        });
        // Stop feeding as soon as shutdown begins, before the server waits for open connections to close.
        using var stopping = CancellationTokenSource.CreateLinkedTokenSource(stoppingToken, lifetime.ApplicationStopping);
        try
        {
            FeedProgress done = await feeder.RunAsync(fleet, new FeedSummaryWriter(Console.Out), stopping.Token).ConfigureAwait(false);
            LogFinished(logger, done.ToSummaryLine());
        }
        catch (OperationCanceledException) when (stopping.IsCancellationRequested)
        {
            LogStopped(logger);
        }
    }

    private async Task<bool> WaitForStartAsync(CancellationToken stoppingToken)
    {
        var started = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
        using (lifetime.ApplicationStarted.Register(() => started.TrySetResult()))
        using (stoppingToken.Register(() => started.TrySetCanceled(stoppingToken)))
        {
            try
            {
                await started.Task.ConfigureAwait(false);
                return true;
            }
            catch (OperationCanceledException)
            {
                return false;
            }
        }
    }

    private Uri ListeningAddress()
    {
        string address = server.Features.Get<IServerAddressesFeature>()?.Addresses.FirstOrDefault()
            ?? throw new InvalidOperationException("the server reports no listening address");
        address = address.Replace("://[::]", "://127.0.0.1", StringComparison.Ordinal)
            .Replace("://0.0.0.0", "://127.0.0.1", StringComparison.Ordinal)
            .Replace("://+", "://127.0.0.1", StringComparison.Ordinal)
            .Replace("://*", "://127.0.0.1", StringComparison.Ordinal);
        return new Uri(address.EndsWith('/') ? address : address + "/");
    }

    [LoggerMessage(Level = LogLevel.Information, Message = "Demo fleet finished its day: {Summary}")]
    private static partial void LogFinished(ILogger logger, string summary);

    [LoggerMessage(Level = LogLevel.Information, Message = "Demo fleet stopped")]
    private static partial void LogStopped(ILogger logger);
}
