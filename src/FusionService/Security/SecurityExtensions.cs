// Registration of key authentication and per-key rate limiting.
using System.Threading.RateLimiting;
using FusionService.Storage.Fleets;
using Microsoft.Extensions.Options;

namespace FusionService.Security;

/// <summary>Registers API-key authentication and per-key rate limiting; marks endpoints with the roles they need.</summary>
public static class SecurityExtensions
{
    /// <summary>Name of the per-key rate limiting policy.</summary>
    public const string RateLimitPolicy = "per-key";

    /// <summary>Adds the key resolver and the per-key fixed-window rate limiter (429 when exceeded).</summary>
    public static IServiceCollection AddFusionSecurity(this IServiceCollection services)
    {
        services.AddOptions<SecurityOptions>().BindConfiguration(SecurityOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<ApiKeyResolver>();
        services.AddRateLimiter(limiter =>
        {
            limiter.RejectionStatusCode = StatusCodes.Status429TooManyRequests;
            limiter.AddPolicy(RateLimitPolicy, http =>
            {
                var options = http.RequestServices.GetRequiredService<IOptions<SecurityOptions>>().Value;
                string header = http.Request.Headers.Authorization.ToString();
                string partition = header.Length == 0 ? "anonymous" : Convert.ToHexStringLower(FleetAdmin.HashSecret(header));
                return RateLimitPartition.GetFixedWindowLimiter(partition, _ => new FixedWindowRateLimiterOptions
                {
                    PermitLimit = options.RateLimitPermits,
                    Window = TimeSpan.FromSeconds(options.RateLimitWindowSeconds),
                    QueueLimit = 0,
                });
            });
        });
        return services;
    }

    /// <summary>Requires a bearer API key with one of <paramref name="roles"/> and applies the per-key rate limit.</summary>
    public static TBuilder RequireApiKey<TBuilder>(this TBuilder builder, params ApiKeyRole[] roles)
        where TBuilder : IEndpointConventionBuilder
    {
        builder.AddEndpointFilter(new ApiKeyFilter(roles));
        builder.RequireRateLimiting(RateLimitPolicy);
        return builder;
    }
}
