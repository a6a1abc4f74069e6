// Registration of the vehicle tracks and the Orleans silo.
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using Orleans.Configuration;

namespace FusionService.Tracking;

/// <summary>Registers the shared track processor, the background writer and the in-process Orleans silo.</summary>
public static class TrackingExtensions
{
    /// <summary>
    /// Adds the track processor (default options, delivery-van noise profile), <see cref="TrackWriteQueue"/> and an
    /// Orleans silo with localhost clustering. Ports come from <c>Orleans:SiloPort</c> and <c>Orleans:GatewayPort</c>
    /// (defaults 11111 and 30000). Replacing the clustering provider is the only change a multi-silo deployment needs:
    /// the grains keep no Orleans state.
    /// </summary>
    public static WebApplicationBuilder AddFusionTracking(this WebApplicationBuilder builder)
    {
        ArgumentNullException.ThrowIfNull(builder);
        builder.Services.AddOptions<TrackGrainOptions>().BindConfiguration(TrackGrainOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        builder.Services.AddSingleton(_ => new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan));
        builder.Services.AddSingleton(TimeProvider.System);
        builder.Services.AddSingleton<TrackWriteQueue>();
        builder.Services.AddSingleton<TrackStoreGate>();
        builder.Services.AddSingleton<TrackDispatcher>();
        builder.Services.AddHostedService(sp => sp.GetRequiredService<TrackWriteQueue>());
        builder.UseOrleans(silo => silo.UseLocalhostClustering());

        // After the silo: hosted services stop in reverse order, so deliveries in flight finish before the silo stops.
        builder.Services.AddHostedService(sp => sp.GetRequiredService<TrackDispatcher>());
        builder.Services.AddOptions<EndpointOptions>().PostConfigure<IConfiguration>((endpoints, configuration) =>
        {
            endpoints.SiloPort = configuration.GetValue("Orleans:SiloPort", 11111);
            endpoints.GatewayPort = configuration.GetValue("Orleans:GatewayPort", 30000);
        });
        builder.Services.AddOptions<DevelopmentClusterMembershipOptions>().PostConfigure<IConfiguration>((membership, configuration) =>
            membership.PrimarySiloEndpoint = new System.Net.IPEndPoint(System.Net.IPAddress.Loopback, configuration.GetValue("Orleans:SiloPort", 11111)));
        return builder;
    }
}
