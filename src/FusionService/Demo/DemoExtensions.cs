namespace FusionService.Demo;

/// <summary>Registration of <c>demo</c> mode.</summary>
public static class DemoExtensions
{
    /// <summary>Whether the command line asks for demo mode (first argument <c>demo</c>).</summary>
    public static bool Matches(string[] args) => args.Length > 0 && string.Equals(args[0], "demo", StringComparison.Ordinal);

    /// <summary>Adds the demo fleet runner (idle unless <see cref="DemoOptions.Enabled"/>) and its validated options.</summary>
    public static IServiceCollection AddFusionDemo(this IServiceCollection services)
    {
        services.AddOptions<DemoOptions>().BindConfiguration(DemoOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddHostedService<DemoFleetRunner>();
        return services;
    }
}
