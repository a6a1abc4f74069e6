// Registration of alerts, webhooks and the live hub.
using FusionService.Database;
using FusionService.Live;
using FusionService.Security;
using Microsoft.AspNetCore.DataProtection;
using Microsoft.AspNetCore.DataProtection.KeyManagement;
using Microsoft.AspNetCore.DataProtection.Repositories;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.Extensions.Options;

namespace FusionService.Alerts;

/// <summary>Registers the alert publisher, rule cache, live hub, webhook dispatcher and silent-vehicle scanner.</summary>
public static class AlertExtensions
{
    /// <summary>Application name of the Data Protection key ring (the same in every process of the service).</summary>
    public const string DataProtectionApplicationName = "FusionService";

    /// <summary>
    /// Adds the alert services (options <c>Alerts</c> and <c>Webhooks</c>, validated at start-up); the webhook deliveries
    /// and the silent-vehicle scan run only when <paramref name="runsScansAndDeliveries"/> (not in a history-read
    /// process, which must not raise or deliver what the ingesting processes do).
    /// </summary>
    public static IServiceCollection AddFusionAlerts(this IServiceCollection services, bool runsScansAndDeliveries = true)
    {
        services.AddOptions<AlertOptions>().BindConfiguration(AlertOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddOptions<WebhookOptions>().BindConfiguration(WebhookOptions.Section).ValidateDataAnnotations().ValidateOnStart();

        // Webhook secrets are encrypted with Data Protection; its key ring lives in PostgreSQL (shared by every process on
        // the database) unless Webhooks:KeyRingDirectory names a directory.
        services.AddDataProtection().SetApplicationName(DataProtectionApplicationName);
        services.AddOptions<KeyManagementOptions>().Configure<IServiceProvider>((keys, sp) =>
        {
            var directory = sp.GetRequiredService<IOptions<WebhookOptions>>().Value.KeyRingDirectory;
            keys.XmlRepository = string.IsNullOrWhiteSpace(directory)
                ? new PostgresXmlRepository(sp.GetRequiredService<FusionDatabase>())
                : new FileSystemXmlRepository(Directory.CreateDirectory(directory), sp.GetRequiredService<ILoggerFactory>());
        });
        services.AddSingleton<WebhookSecretProtector>();
        services.AddSingleton(sp => new WebhookDestinationPolicy(sp.GetRequiredService<IOptions<WebhookOptions>>(), sp.GetService<IServer>()));
        services.AddSingleton<WebhookHostResolver>();
        services.AddSingleton<WebhookConnector>();
        services.AddHttpClient(WebhookDispatcher.ClientName, (sp, client) =>
            {
                client.Timeout = Timeout.InfiniteTimeSpan;
                client.MaxResponseContentBufferSize = Math.Max(1, sp.GetRequiredService<IOptions<WebhookOptions>>().Value.MaxResponseBytes);
                client.DefaultRequestHeaders.UserAgent.ParseAdd("FusionService-Webhooks/1");
            })
            .ConfigurePrimaryHttpMessageHandler(sp => new SocketsHttpHandler
            {
                // Redirects are never followed: a 3xx is a failed attempt. No proxy, no cookies, no decompression; the
                // connector checks the address actually connected to.
                AllowAutoRedirect = false,
                UseProxy = false,
                UseCookies = false,
                AutomaticDecompression = System.Net.DecompressionMethods.None,
                ConnectCallback = sp.GetRequiredService<WebhookConnector>().ConnectAsync,
                ConnectTimeout = TimeSpan.FromSeconds(sp.GetRequiredService<IOptions<WebhookOptions>>().Value.TimeoutS),
                MaxResponseHeadersLength = 16,
                MaxResponseDrainSize = 16 * 1024,
                PooledConnectionLifetime = TimeSpan.FromMinutes(2),
            });
        services.AddSingleton<LiveHub>();
        services.AddSingleton<VehicleActivity>();
        services.AddSingleton<AlertRuleCache>();
        services.AddSingleton<WebhookDispatcher>();
        services.AddSingleton<AlertPublisher>();
        if (runsScansAndDeliveries)
        {
            services.AddHostedService(sp => sp.GetRequiredService<WebhookDispatcher>());
            services.AddHostedService<VehicleSilenceScanner>();
        }

        return services;
    }
}
