// Webhook subscriptions of the caller's fleet.
using FusionService.Database;
using FusionService.Security;
using FusionService.Storage.Alerts;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.HttpResults;

using FusionService.Operations;

namespace FusionService.Alerts;

/// <summary>Maps <c>POST/GET /v1/webhooks</c> and <c>DELETE /v1/webhooks/{id}</c> (admin keys only).</summary>
public static class WebhookEndpoints
{
    /// <summary>Maps the webhook endpoints.</summary>
    public static IEndpointRouteBuilder MapWebhookEndpoints(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/v1/webhooks").WithTags("Alerts");
        group.MapPost("/", CreateWebhook)
            .WithRequestExample("webhook-request.json")
            .WithResponseExample(201, "webhook.json")
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("CreateWebhook")
            .WithSummary("Subscribe a URL to the fleet's alerts")
            .WithDescription("Body {\"url\": \"https://...\", \"secret\": \"16-200 characters\"}. Every alert that opens or resolves is POSTed "
                + "as the alert JSON with headers Fusion-Webhook-Id (delivery id, the same on retries), Fusion-Webhook-Timestamp (Unix "
                + "seconds) and Fusion-Webhook-Signature: hmac-sha256=<hex of HMAC-SHA256(secret, \"<timestamp>\\n<body>\")>. A non-2xx "
                + "answer or a timeout is retried with exponential back-off from a durable outbox until it succeeds. Needs an admin key.")
            .Accepts<WebhookRequest>("application/json")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        group.MapGet("/", ListWebhooks)
            .WithResponseExample(200, "webhooks.json")
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("ListWebhooks")
            .WithSummary("The fleet's webhook subscriptions")
            .WithDescription("Subscriptions (without their secrets), oldest first. Needs an admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        group.MapDelete("/{id}", DeleteWebhook)
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("DeleteWebhook")
            .WithSummary("Delete a webhook subscription")
            .WithDescription("Deletes the subscription and its pending deliveries; 204, or 404 for an unknown id or another fleet's. Needs an admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }

    /// <summary>Handles <c>POST /v1/webhooks</c>.</summary>
    internal static async Task<Results<Created<WebhookResponse>, ProblemHttpResult>> CreateWebhook(WebhookRequest? body, HttpContext http, FusionDatabase database)
    {
        var caller = ApiCaller.Of(http);
        if (body?.Url is not { } url || !Uri.TryCreate(url, UriKind.Absolute, out var uri) || (uri.Scheme != Uri.UriSchemeHttp && uri.Scheme != Uri.UriSchemeHttps)
            || url.Length > 2000)
        {
            return BadRequest("url: must be an absolute http or https URL of at most 2000 characters");
        }

        if (body.Secret is not { } secret || secret.Length < 16 || secret.Length > 200)
        {
            return BadRequest("secret: must be 16-200 characters");
        }

        var row = await new WebhookRepository(database.DataSource).CreateAsync(caller.FleetId, url, secret, http.RequestAborted).ConfigureAwait(false);
        return TypedResults.Created("/v1/webhooks/" + row.WebhookId.ToString("D"), new WebhookResponse(row.WebhookId, row.Url, row.CreatedAt));
    }

    /// <summary>Handles <c>GET /v1/webhooks</c>.</summary>
    internal static async Task<Ok<WebhookListResponse>> ListWebhooks(HttpContext http, FusionDatabase database)
    {
        var caller = ApiCaller.Of(http);
        var rows = await new WebhookRepository(database.DataSource).ListAsync(caller.FleetId, http.RequestAborted).ConfigureAwait(false);
        return TypedResults.Ok(new WebhookListResponse([.. rows.Select(r => new WebhookResponse(r.WebhookId, r.Url, r.CreatedAt))]));
    }

    /// <summary>Handles <c>DELETE /v1/webhooks/{id}</c>.</summary>
    internal static async Task<Results<NoContent, ProblemHttpResult>> DeleteWebhook(string id, HttpContext http, FusionDatabase database)
    {
        var caller = ApiCaller.Of(http);
        if (!Guid.TryParse(id, out var webhookId)
            || !await new WebhookRepository(database.DataSource).DeleteAsync(caller.FleetId, webhookId, http.RequestAborted).ConfigureAwait(false))
        {
            return TypedResults.Problem(title: "Not found", detail: "id: no webhook '" + id + "' in this fleet", statusCode: StatusCodes.Status404NotFound);
        }

        return TypedResults.NoContent();
    }

    private static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(title: "Invalid request", detail: detail, statusCode: StatusCodes.Status400BadRequest);
}
