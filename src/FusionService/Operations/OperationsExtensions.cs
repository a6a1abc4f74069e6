// Registration of metrics, health checks and the silo status.
using Orleans.Runtime;

namespace FusionService.Operations;

/// <summary>Registers metrics, the readiness check and the silo status participant.</summary>
public static class OperationsExtensions
{
    /// <summary>
    /// Adds <see cref="ServiceMetrics"/>, <see cref="SiloStatus"/>, health checks, the OpenAPI document and the handler
    /// that answers malformed HTTP requests with their 4xx.
    /// </summary>
    public static IServiceCollection AddFusionOperations(this IServiceCollection services)
    {
        services.AddOptions<OperationsOptions>().BindConfiguration(OperationsOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<ServiceMetrics>();
        services.AddSingleton<SiloStatus>();
        services.AddSingleton<ILifecycleParticipant<ISiloLifecycle>>(sp => sp.GetRequiredService<SiloStatus>());
        services.AddHealthChecks().AddCheck<ReadinessHealthCheck>("store-and-silo", tags: [OperationsEndpoints.ReadyTag]);
        services.AddFusionOpenApi();
        services.AddExceptionHandler<BadRequestExceptionHandler>();
        return services;
    }
}
