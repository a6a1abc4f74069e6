// Registration of the ingest path.
using Microsoft.AspNetCore.Server.Kestrel.Core;
using Microsoft.Extensions.Options;

namespace FusionService.Ingest;

/// <summary>Registers the group-commit writer and the ingest pipeline.</summary>
public static class IngestExtensions
{
    /// <summary>
    /// Adds <see cref="IngestOptions"/>, the <see cref="GroupCommitWriter"/> and the <see cref="IngestPipeline"/>, and sets
    /// Kestrel's request body limit from <see cref="IngestOptions.MaxBodyBytes"/> (one byte above it, so that the ingest
    /// endpoints see an over-long body and answer 413 with the limit named).
    /// </summary>
    public static IServiceCollection AddFusionIngest(this IServiceCollection services)
    {
        services.AddOptions<IngestOptions>().BindConfiguration(IngestOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddOptions<KestrelServerOptions>().Configure<IOptions<IngestOptions>>(
            (kestrel, ingest) => kestrel.Limits.MaxRequestBodySize = ingest.Value.MaxBodyBytes + 1L);
        services.AddSingleton<IngestActivity>();
        services.AddSingleton<GroupCommitWriter>();
        services.AddHostedService(sp => sp.GetRequiredService<GroupCommitWriter>());
        services.AddOptions<Fleets.TenancyOptions>().BindConfiguration(Fleets.TenancyOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<Fleets.FleetVehicleQuota>();
        services.AddSingleton<IngestPipeline>();
        return services;
    }
}
