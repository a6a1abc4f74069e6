// A request refused by a rate limit, and how it is answered.
using System.Globalization;
using Microsoft.AspNetCore.Http.HttpResults;

namespace FusionService.Security;

/// <summary>Which limit refused a request and when to retry.</summary>
/// <param name="Limit">What was counted, in words (e.g. "requests of this API key").</param>
/// <param name="Option">The setting that sets the limit (e.g. <c>Security:RateLimitPermits</c>).</param>
/// <param name="Permits">The limit's permits per window.</param>
/// <param name="WindowSeconds">The window, seconds.</param>
/// <param name="RetryAfterS">Whole seconds after which the request would be admitted (at least 1).</param>
public sealed record RateLimitRefusal(string Limit, string Option, long Permits, int WindowSeconds, int RetryAfterS)
{
    /// <summary>The detail text of the 429 answer.</summary>
    public string Detail => string.Create(
        CultureInfo.InvariantCulture,
        $"{Limit}: over the limit of {Permits} per {WindowSeconds} s ({Option}); retry after {RetryAfterS} s");

    /// <summary>Sets <c>Retry-After</c> on the response and returns the 429 problem answer.</summary>
    public ProblemHttpResult ToResult(HttpContext http)
    {
        ArgumentNullException.ThrowIfNull(http);
        http.Response.Headers.RetryAfter = RetryAfterS.ToString(CultureInfo.InvariantCulture);
        return TypedResults.Problem(
            title: "Too many requests",
            detail: Detail,
            statusCode: StatusCodes.Status429TooManyRequests,
            extensions: new Dictionary<string, object?> { ["limit"] = Option, ["retry_after_s"] = RetryAfterS });
    }
}
