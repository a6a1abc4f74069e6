// Registration of the ingest path.
namespace FusionService.Ingest;

/// <summary>Registers the group-commit writer and the ingest pipeline.</summary>
public static class IngestExtensions
{
    /// <summary>Adds <see cref="IngestOptions"/>, the <see cref="GroupCommitWriter"/> and the <see cref="IngestPipeline"/>.</summary>
    public static IServiceCollection AddFusionIngest(this IServiceCollection services)
    {
        services.AddOptions<IngestOptions>().BindConfiguration(IngestOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<GroupCommitWriter>();
        services.AddHostedService(sp => sp.GetRequiredService<GroupCommitWriter>());
        services.AddOptions<Fleets.TenancyOptions>().BindConfiguration(Fleets.TenancyOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<Fleets.FleetVehicleQuota>();
        services.AddSingleton<IngestPipeline>();
        return services;
    }
}
