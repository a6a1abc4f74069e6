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
        app.MapGet("/metrics", GetMetrics)
            .WithName("Metrics")
            .WithSummary("Prometheus metrics")
            .WithDescription("Ingested messages by verdict, gated measurements, write-queue depth, group-commit latency and "
                + "fused-state lag, in the Prometheus text exposition format 0.0.4. Service-wide counts only (no fleet, vehicle or "
                + "position). When Operations:MetricsToken is set, send it as 'Authorization: Bearer <token>'.")
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

    /// <summary>Handles <c>GET /metrics</c>.</summary>
    internal static Results<ContentHttpResult, ProblemHttpResult> GetMetrics(HttpContext http, ServiceMetrics metrics, IOptions<OperationsOptions> options)
    {
        string token = options.Value.MetricsToken;
        if (token.Length > 0)
        {
            string header = http.Request.Headers.Authorization.ToString();
            bool ok = header.StartsWith("Bearer ", StringComparison.Ordinal)
                && CryptographicOperations.FixedTimeEquals(Encoding.UTF8.GetBytes(header[7..].Trim()), Encoding.UTF8.GetBytes(token));
            if (!ok)
            {
                return TypedResults.Problem(
                    title: "Unauthorized",
                    detail: "header Authorization: send 'Authorization: Bearer <Operations:MetricsToken>'",
                    statusCode: StatusCodes.Status401Unauthorized);
            }
        }

        return TypedResults.Text(metrics.Render(), "text/plain; version=0.0.4; charset=utf-8");
    }
}
