// Registration of alerts, webhooks and the live hub.
using FusionService.Live;
using Microsoft.Extensions.Options;

namespace FusionService.Alerts;

/// <summary>Registers the alert publisher, rule cache, live hub, webhook dispatcher and silent-vehicle scanner.</summary>
public static class AlertExtensions
{
    /// <summary>Adds the alert services (options <c>Alerts</c> and <c>Webhooks</c>, validated at start-up).</summary>
    public static IServiceCollection AddFusionAlerts(this IServiceCollection services)
    {
        services.AddOptions<AlertOptions>().BindConfiguration(AlertOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddOptions<WebhookOptions>().BindConfiguration(WebhookOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddHttpClient(WebhookDispatcher.ClientName, (sp, client) =>
        {
            client.Timeout = Timeout.InfiniteTimeSpan;
            client.DefaultRequestHeaders.UserAgent.ParseAdd("FusionService-Webhooks/1");
            _ = sp.GetRequiredService<IOptions<WebhookOptions>>();
        });
        services.AddSingleton<LiveHub>();
        services.AddSingleton<VehicleActivity>();
        services.AddSingleton<AlertRuleCache>();
        services.AddSingleton<WebhookDispatcher>();
        services.AddSingleton<AlertPublisher>();
        services.AddHostedService(sp => sp.GetRequiredService<WebhookDispatcher>());
        services.AddHostedService<VehicleSilenceScanner>();
        return services;
    }
}
