// Registration of key authentication and the per-key, per-fleet and per-address rate limits.
using FusionService.Storage.Fleets;
using Microsoft.Extensions.Options;

namespace FusionService.Security;

/// <summary>Registers API-key authentication and the rate limits; marks endpoints with the roles they need.</summary>
public static class SecurityExtensions
{
    /// <summary>
    /// Adds the options of section <c>Security</c>, the key resolver, the <see cref="TenantRateLimiter"/> and the
    /// <see cref="StreamKeyWatch"/> that closes WebSocket streams whose key was revoked or expired.
    /// </summary>
    public static IServiceCollection AddFusionSecurity(this IServiceCollection services)
    {
        services.AddOptions<SecurityOptions>().BindConfiguration(SecurityOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<ApiKeyResolver>();
        services.AddSingleton(sp => new TenantRateLimiter(
            sp.GetRequiredService<IOptions<SecurityOptions>>(),
            sp.GetRequiredService<Operations.ServiceMetrics>(),
            sp.GetRequiredService<IGrainFactory>(),
            sp.GetRequiredService<ILogger<TenantRateLimiter>>()));
        services.AddSingleton<StreamKeyWatch>();
        services.AddHostedService(sp => sp.GetRequiredService<StreamKeyWatch>());
        return services;
    }

    /// <summary>
    /// Requires a bearer API key with one of <paramref name="roles"/>; the request counts against the key's and its
    /// fleet's request limits (429 with Retry-After beyond).
    /// </summary>
    public static TBuilder RequireApiKey<TBuilder>(this TBuilder builder, params ApiKeyRole[] roles)
        where TBuilder : IEndpointConventionBuilder
    {
        builder.AddEndpointFilter(new ApiKeyFilter(roles));
        return builder.WithTooManyRequests();
    }

    /// <summary>Declares the 429 problem answer of the rate limits in the endpoint's OpenAPI description.</summary>
    internal static TBuilder WithTooManyRequests<TBuilder>(this TBuilder builder)
        where TBuilder : IEndpointConventionBuilder =>
        builder.WithMetadata(new ProducesResponseTypeMetadata(
            StatusCodes.Status429TooManyRequests, typeof(Microsoft.AspNetCore.Mvc.ProblemDetails), ["application/problem+json"]));
}
