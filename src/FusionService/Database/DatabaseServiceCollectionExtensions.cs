// Registration of the store.
namespace FusionService.Database;

/// <summary>Registers the PostgreSQL store.</summary>
public static class DatabaseServiceCollectionExtensions
{
    /// <summary>Adds <see cref="FusionDatabase"/>, its start-up (call before <c>UseOrleans</c>) and partition maintenance.</summary>
    public static IServiceCollection AddFusionDatabase(this IServiceCollection services)
    {
        services.AddOptions<DatabaseOptions>().BindConfiguration(DatabaseOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<FusionDatabase>();
        services.AddHostedService<DatabaseLifetime>();
        services.AddHostedService<PartitionMaintenanceService>();
        return services;
    }
}
