// Health, metrics and API documentation endpoints.
using System.Security.Cryptography;
using System.Text;
using Microsoft.Extensions.Options;
using Microsoft.Extensions.Diagnostics.HealthChecks;
using Microsoft.AspNetCore.Http.HttpResults;

namespace FusionService.Operations;

/// <summary>Maps <c>/health/live</c>, <c>/health/ready</c>, <c>/metrics</c>, the OpenAPI document and Swagger UI.</summary>
public static class OperationsEndpoints
{
    /// <summary>Tag of the readiness checks.</summary>
    public const string ReadyTag = "ready";

    /// <summary>Maps the operations endpoints.</summary>
    public static IEndpointRouteBuilder MapOperationsEndpoints(this IEndpointRouteBuilder app)
    {
        app.MapGet("/health/live", GetLive)
            .WithName("Live")
            .WithSummary("Liveness")
            .WithDescription("200 while the process serves requests; checks nothing else.")
            .WithTags("Operations");
        app.MapGet("/health/ready", GetReady)
            .WithName("Ready")
            .WithSummary("Readiness")
            .WithDescription("200 when PostgreSQL is reachable, every migration is applied and the Orleans silo is active; 503 otherwise.")
            .WithTags("Operations");
        // The OpenTelemetry Prometheus exporter writes the scrape; it runs as a pipeline of its own behind the key check.
        var scrape = app.CreateApplicationBuilder()
            .UseOpenTelemetryPrometheusScrapingEndpoint(meterProvider: null, predicate: _ => true, path: null, configureBranchedPipeline: null, optionsName: null)
            .Build();
        app.MapGet("/metrics", (HttpContext http, IOptions<OperationsOptions> options) => GetMetricsAsync(http, options, scrape))
            .WithName("Metrics")
            .WithSummary("Prometheus metrics")
            .WithDescription("The metrics of the process in the Prometheus text exposition format 0.0.4 (or the open metrics text "
                + "format 1.0 when the scraper asks for it in Accept): the service's own fusion_* instruments (messages by outcome and kind, "
                + "the tracks' decisions per sensor, resets, group commits, fused-state lag, queue depths, smoothing replays, history "
                + "reads, rate-limit refusals, webhook deliveries), ASP.NET Core and Kestrel, Npgsql, Orleans and the .NET runtime. "
                + "No fleet, vehicle or position. Send 'Authorization: Bearer <token>' with the scrape token Operations:MetricsToken, "
                + "or an admin API key of any fleet; 401 otherwise, 403 for a key of another role. Operations:MetricsAnonymous=true "
                + "leaves it open (for a port only an internal network reaches). Instruments, units and alerting rules: docs/operations.md.")
            .Produces<string>(StatusCodes.Status200OK, "text/plain")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status429TooManyRequests)
            .WithTags("Operations");
        app.MapOpenApi("/openapi/{documentName}.json");
        return app;
    }

    /// <summary>Handles <c>GET /health/live</c>.</summary>
    internal static ContentHttpResult GetLive() => TypedResults.Text("Healthy", "text/plain");

    /// <summary>Handles <c>GET /health/ready</c>.</summary>
    internal static async Task<Results<ContentHttpResult, ProblemHttpResult>> GetReady(HealthCheckService health, CancellationToken cancellationToken)
    {
        var report = await health.CheckHealthAsync(c => c.Tags.Contains(ReadyTag), cancellationToken).ConfigureAwait(false);
        if (report.Status == HealthStatus.Healthy)
        {
            return TypedResults.Text("Healthy", "text/plain");
        }

        return TypedResults.Problem(
            title: "Not ready",
            detail: string.Join("; ", report.Entries.Where(e => e.Value.Status != HealthStatus.Healthy).Select(e => e.Key + ": " + e.Value.Description)),
            statusCode: StatusCodes.Status503ServiceUnavailable);
    }

    /// <summary>The metrics for a scraper with the configured token or an admin key, written by <paramref name="scrape"/>.</summary>
    internal static async Task<Results<EmptyHttpResult, ProblemHttpResult>> GetMetricsAsync(HttpContext http, IOptions<OperationsOptions> options, RequestDelegate scrape)
    {
        string token = options.Value.MetricsToken;
        string header = http.Request.Headers.Authorization.ToString();
        bool tokenMatches = token.Length > 0
            && header.StartsWith("Bearer ", StringComparison.OrdinalIgnoreCase)
            && CryptographicOperations.FixedTimeEquals(Encoding.UTF8.GetBytes(header[7..].Trim()), Encoding.UTF8.GetBytes(token));
        if (!tokenMatches && !options.Value.MetricsAnonymous)
        {
            // Anything but the token is taken for an API key: an admin key of any fleet may read the service-wide counts,
            // and wrong guesses count against the client address's failed authentications like any other.
            if (await Security.ApiKeyFilter.AuthenticateAsync(http, [Storage.Fleets.ApiKeyRole.Admin]).ConfigureAwait(false) is { } refused)
            {
                return refused is ProblemHttpResult { StatusCode: not StatusCodes.Status401Unauthorized } problem
                    ? problem
                    : TypedResults.Problem(
                        title: "Unauthorized",
                        detail: "header Authorization: send 'Authorization: Bearer <Operations:MetricsToken>' (the scrape token) or an admin API key",
                        statusCode: StatusCodes.Status401Unauthorized);
            }
        }

        await scrape(http).ConfigureAwait(false);
        return TypedResults.Empty;
    }
}
