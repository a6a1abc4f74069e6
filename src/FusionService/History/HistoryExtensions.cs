// Registration of the track history services.
namespace FusionService.History;

/// <summary>Registers the options and services of the track history and distance endpoints.</summary>
public static class HistoryExtensions
{
    /// <summary>
    /// Binds and validates (at start-up) <see cref="TrackHistoryOptions"/> and <see cref="HeavyReadOptions"/> and adds the
    /// <see cref="HeavyReadGate"/>, <see cref="SmoothedTrackBuilder"/> and
    /// the start-up <see cref="SmoothingWarmUp"/>.
    /// </summary>
    public static IServiceCollection AddFusionHistory(this IServiceCollection services)
    {
        services.AddOptions<TrackHistoryOptions>().BindConfiguration(TrackHistoryOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddOptions<HeavyReadOptions>().BindConfiguration(HeavyReadOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<HeavyReadGate>();
        services.AddSingleton<SmoothedTrackBuilder>();
        services.AddSingleton<ReplayCpuBudget>();
        services.AddSingleton<SmoothingWarmUp>();
        services.AddHostedService(sp => sp.GetRequiredService<SmoothingWarmUp>());
        return services;
    }
}
