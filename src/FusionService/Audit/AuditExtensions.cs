// Registration of the diagnostics, explanation and duplicate counting services.
namespace FusionService.Audit;

/// <summary>Registers <see cref="AuditOptions"/> and the <see cref="DuplicateCounter"/>.</summary>
public static class AuditExtensions
{
    /// <summary>Adds the audit options (validated at start-up) and the duplicate counter the ingest path uses.</summary>
    public static IServiceCollection AddFusionAudit(this IServiceCollection services)
    {
        services.AddOptions<AuditOptions>().BindConfiguration(AuditOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<DuplicateCounter>();
        return services;
    }
}
