// Registration of the store.
using Microsoft.Extensions.DependencyInjection.Extensions;

namespace FusionService.Database;

/// <summary>Registers the PostgreSQL store.</summary>
public static class DatabaseServiceCollectionExtensions
{
    /// <summary>
    /// Adds <see cref="FusionDatabase"/>, its start-up (call before <c>UseOrleans</c>) and, unless
    /// <paramref name="historyOnly"/>, partition maintenance. A history-read process (<c>Service:Role=HistoryReads</c>)
    /// maintains no partitions and, without a connection string, attaches to the embedded cluster a running service
    /// keeps in <c>Database:DataDirectory</c> instead of starting one.
    /// </summary>
    public static IServiceCollection AddFusionDatabase(this IServiceCollection services, bool historyOnly = false)
    {
        services.AddOptions<DatabaseOptions>().BindConfiguration(DatabaseOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<FusionDatabase>();
        services.AddHostedService(sp => new DatabaseLifetime(sp.GetRequiredService<FusionDatabase>(), historyOnly));
        services.TryAddSingleton(TimeProvider.System);
        services.AddSingleton<ChunkFoldQueue>();
        if (!historyOnly)
        {
            services.AddHostedService<PartitionMaintenanceService>();
            services.AddSingleton<ChunkFoldService>();
            services.AddHostedService(sp => sp.GetRequiredService<ChunkFoldService>());
        }

        return services;
    }
}
