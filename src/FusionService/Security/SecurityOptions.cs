// Key caching and per-key rate limits.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Security;

/// <summary>Settings of section <c>Security</c>.</summary>
public sealed class SecurityOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Security";

    /// <summary>Seconds a resolved key is remembered. Default 30.</summary>
    [Range(0, 3600)]
    public int KeyCacheSeconds { get; set; } = 30;

    /// <summary>Requests each key may make per <see cref="RateLimitWindowSeconds"/>. Default 600.</summary>
    [Range(1, int.MaxValue)]
    public int RateLimitPermits { get; set; } = 600;

    /// <summary>Length of the fixed rate-limit window, seconds. Default 60.</summary>
    [Range(1, 3600)]
    public int RateLimitWindowSeconds { get; set; } = 60;
}
