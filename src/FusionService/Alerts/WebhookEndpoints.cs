// Webhook subscriptions of the caller's fleet, and their dead letters.
using System.Globalization;
using System.Net;
using FusionService.Database;
using FusionService.Security;
using FusionService.Storage.Alerts;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.Options;

using FusionService.Operations;

namespace FusionService.Alerts;

/// <summary>
/// Maps <c>POST/GET /v1/webhooks</c>, <c>DELETE /v1/webhooks/{id}</c>, <c>GET /v1/webhooks/{id}/dead-letters</c> and
/// <c>POST /v1/webhooks/{id}/dead-letters/requeue</c> (admin keys only).
/// </summary>
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
            .WithDescription("Body {\"url\": \"https://...\", \"secret\": \"16-200 characters\"}. The URL must be https (http only when the "
                + "service allows it, Webhooks:AllowHttp) and must not name a loopback, link-local, private, multicast or unspecified "
                + "address or 'localhost' (checked again after name resolution at every connection). A fleet has at most "
                + "Webhooks:MaxPerFleet subscriptions (409 beyond). Every alert that opens, changes or resolves is POSTed as the alert "
                + "JSON with headers Fusion-Webhook-Id (delivery id, the same on retries), Fusion-Webhook-Timestamp (Unix seconds) and "
                + "Fusion-Webhook-Signature: hmac-sha256=<hex of HMAC-SHA256(secret, \"<id>\\n<timestamp>\\n<body>\")>. Redirects are "
                + "not followed. A non-2xx answer or a timeout is retried with exponential back-off from a durable outbox, up to "
                + "Webhooks:MaxAttempts attempts; then the delivery is dead-lettered (GET .../dead-letters). The secret is stored "
                + "encrypted. Needs an admin key.")
            .Accepts<WebhookRequest>("application/json")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status409Conflict);
        group.MapGet("/", ListWebhooks)
            .WithResponseExample(200, "webhooks.json")
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("ListWebhooks")
            .WithSummary("The fleet's webhook subscriptions")
            .WithDescription("Subscriptions (without their secrets), oldest first. Needs an admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .RetryOnStaleConnection();
        group.MapDelete("/{id}", DeleteWebhook)
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("DeleteWebhook")
            .WithSummary("Delete a webhook subscription")
            .WithDescription("Deletes the subscription and its pending deliveries; 204, or 404 for an unknown id or another fleet's. Needs an admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        group.MapGet("/{id}/dead-letters", ListDeadLetters)
            .WithResponseExample(200, "dead-letters.json")
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("ListWebhookDeadLetters")
            .WithSummary("Deliveries of a subscription that were given up")
            .WithDescription("Deliveries whose last allowed attempt (Webhooks:MaxAttempts) failed, newest first, with the last error. "
                + "limit: 1-1000, default 100. 404 for an unknown id or another fleet's. Needs an admin key.")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound)
            .RetryOnStaleConnection();
        group.MapPost("/{id}/dead-letters/requeue", RequeueDeadLetters)
            .WithResponseExample(200, "requeue.json")
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("RequeueWebhookDeadLetters")
            .WithSummary("Send a subscription's dead letters again")
            .WithDescription("Makes every dead letter of the subscription due now with a fresh attempt count (same delivery id and "
                + "body; a new timestamp and signature per attempt) and answers how many. 404 for an unknown id or another fleet's. "
                + "Needs an admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }

    /// <summary>Handles <c>POST /v1/webhooks</c>.</summary>
    internal static async Task<Results<Created<WebhookResponse>, ProblemHttpResult>> CreateWebhook(
        WebhookRequest? body, HttpContext http, FusionDatabase database, WebhookSecretProtector secrets, WebhookDestinationPolicy policy,
        IOptions<WebhookOptions> options)
    {
        var caller = ApiCaller.Of(http);
        var o = options.Value;
        if (CheckUrl(body?.Url, o, policy) is { } urlProblem)
        {
            return BadRequest(urlProblem);
        }

        if (body!.Secret is not { } secret || secret.Length < 16 || secret.Length > 200)
        {
            return BadRequest("secret: must be 16-200 characters");
        }

        var row = await new WebhookRepository(database.DataSource)
            .CreateAsync(caller.FleetId, body.Url!, secrets.Protect(secret), o.MaxPerFleet, http.RequestAborted).ConfigureAwait(false);
        if (row is null)
        {
            return TypedResults.Problem(
                title: "Too many webhooks",
                detail: "webhooks: the fleet has " + o.MaxPerFleet.ToString(CultureInfo.InvariantCulture)
                    + " subscriptions, the most allowed (Webhooks:MaxPerFleet); delete one first",
                statusCode: StatusCodes.Status409Conflict);
        }

        return TypedResults.Created("/v1/webhooks/" + row.WebhookId.ToString("D"), new WebhookResponse(row.WebhookId, row.Url, row.CreatedAt));
    }

    /// <summary>Why <paramref name="url"/> cannot be a webhook target (the problem detail), or null.</summary>
    internal static string? CheckUrl(string? url, WebhookOptions options, WebhookDestinationPolicy policy)
    {
        string schemes = options.AllowHttp ? "http or https" : "https";
        if (url is null || url.Length > 2000 || !Uri.TryCreate(url, UriKind.Absolute, out var uri)
            || (uri.Scheme != Uri.UriSchemeHttps && !(options.AllowHttp && uri.Scheme == Uri.UriSchemeHttp)))
        {
            return "url: must be an absolute " + schemes + " URL of at most 2000 characters"
                + (options.AllowHttp || url is null || !url.StartsWith("http:", StringComparison.OrdinalIgnoreCase) ? string.Empty : " (http is not allowed: Webhooks:AllowHttp)");
        }

        if (uri.UserInfo.Length > 0)
        {
            return "url: must not carry a user name or password";
        }

        string host = uri.IdnHost.Trim('[', ']');
        if (IPAddress.TryParse(host, out var address))
        {
            if (policy.Refusal(address, uri.Port) is { } why)
            {
                return "url: the host " + host + " is a refused destination (" + why + ")";
            }
        }
        else if (host.Equals("localhost", StringComparison.OrdinalIgnoreCase) || host.EndsWith(".localhost", StringComparison.OrdinalIgnoreCase))
        {
            // RFC 6761 section 6.3: localhost names resolve to loopback.
            return "url: the host " + host + " is a refused destination (loopback)";
        }

        return null;
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
            return NotFound(id);
        }

        return TypedResults.NoContent();
    }

    /// <summary>Handles <c>GET /v1/webhooks/{id}/dead-letters</c>.</summary>
    internal static async Task<Results<Ok<DeadLetterListResponse>, ProblemHttpResult>> ListDeadLetters(
        string id, HttpContext http, FusionDatabase database, string? limit = null)
    {
        var caller = ApiCaller.Of(http);
        int count = 100;
        if (limit is not null && (!int.TryParse(limit, NumberStyles.Integer, CultureInfo.InvariantCulture, out count) || count < 1 || count > 1000))
        {
            return BadRequest("limit: must be an integer from 1 to 1000");
        }

        if (await FindAsync(id, caller.FleetId, database, http.RequestAborted).ConfigureAwait(false) is not { } webhookId)
        {
            return NotFound(id);
        }

        var rows = await new WebhookOutbox(database.DataSource).ListDeadLettersAsync(caller.FleetId, webhookId, count, http.RequestAborted).ConfigureAwait(false);
        return TypedResults.Ok(new DeadLetterListResponse(
            [.. rows.Select(r => new DeadLetterResponse(r.DeliveryId, r.AlertId, r.Attempts, r.LastError, r.CreatedAt, r.DeadLetteredAt))]));
    }

    /// <summary>Handles <c>POST /v1/webhooks/{id}/dead-letters/requeue</c>.</summary>
    internal static async Task<Results<Ok<RequeueResponse>, ProblemHttpResult>> RequeueDeadLetters(
        string id, HttpContext http, FusionDatabase database, WebhookDispatcher dispatcher)
    {
        var caller = ApiCaller.Of(http);
        if (await FindAsync(id, caller.FleetId, database, http.RequestAborted).ConfigureAwait(false) is not { } webhookId)
        {
            return NotFound(id);
        }

        int requeued = await new WebhookOutbox(database.DataSource).RequeueDeadLettersAsync(caller.FleetId, webhookId, http.RequestAborted).ConfigureAwait(false);
        if (requeued > 0)
        {
            dispatcher.Wake();
        }

        return TypedResults.Ok(new RequeueResponse(requeued));
    }

    private static async Task<Guid?> FindAsync(string id, Guid fleetId, FusionDatabase database, CancellationToken cancellationToken)
    {
        if (!Guid.TryParse(id, out var webhookId))
        {
            return null;
        }

        var rows = await new WebhookRepository(database.DataSource).ListAsync(fleetId, cancellationToken).ConfigureAwait(false);
        return rows.Any(r => r.WebhookId == webhookId) ? webhookId : null;
    }

    private static ProblemHttpResult NotFound(string id) =>
        TypedResults.Problem(title: "Not found", detail: "id: no webhook '" + id + "' in this fleet", statusCode: StatusCodes.Status404NotFound);

    private static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(title: "Invalid request", detail: detail, statusCode: StatusCodes.Status400BadRequest);
}
