// Bearer-key authentication, role check and per-key rate limit for one endpoint.
using FusionService.Storage.Failures;
using FusionService.Storage.Fleets;
using Npgsql;

namespace FusionService.Security;

/// <summary>
/// Requires <c>Authorization: Bearer &lt;key&gt;</c> with one of <paramref name="roles"/>: 401 without a key or with an
/// unknown, revoked or expired one, 403 for a valid key of another role, 429 (with <c>Retry-After</c>) when the key's or
/// fleet's request limit is spent or the client address has failed to authenticate too often, 503 when the key store
/// cannot be reached.
/// </summary>
internal sealed class ApiKeyFilter(ApiKeyRole[] roles) : IEndpointFilter
{
    private const string Scheme = "Bearer ";

    public async ValueTask<object?> InvokeAsync(EndpointFilterInvocationContext context, EndpointFilterDelegate next)
    {
        var http = context.HttpContext;
        var result = await AuthenticateAsync(http, roles).ConfigureAwait(false);
        return result ?? await next(context).ConfigureAwait(false);
    }

    /// <summary>Attaches the caller to <paramref name="http"/>, or returns the problem result to answer with.</summary>
    public static async Task<IResult?> AuthenticateAsync(HttpContext http, ApiKeyRole[] roles)
    {
        var limiter = http.RequestServices.GetRequiredService<TenantRateLimiter>();
        var resolver = http.RequestServices.GetRequiredService<ApiKeyResolver>();
        var address = http.Connection.RemoteIpAddress;
        string header = http.Request.Headers.Authorization.ToString();
        string secret = header.StartsWith(Scheme, StringComparison.OrdinalIgnoreCase) ? header[Scheme.Length..].Trim() : string.Empty;

        // A key this process accepted recently passes even from an address that failed too often (a gateway shared by
        // many devices, one of them misconfigured); anything else from such an address is refused before any lookup.
        ApiCaller? caller = secret.Length > 0 ? resolver.TryCached(Convert.ToHexStringLower(FleetAdmin.HashSecret(secret))) : null;
        if (caller is null && limiter.FailedAuthBlocked(address) is { } blocked)
        {
            return blocked.ToResult(http);
        }

        if (secret.Length == 0)
        {
            limiter.NoteFailedAuth(address);
            http.Response.Headers.WWWAuthenticate = "Bearer";
            return TypedResults.Problem(
                title: "Authentication required",
                detail: "header Authorization: missing; send 'Authorization: Bearer <API key>'",
                statusCode: StatusCodes.Status401Unauthorized);
        }

        if (caller is null)
        {
            try
            {
                try
                {
                    caller = await resolver.ResolveAsync(secret, http.RequestAborted).ConfigureAwait(false);
                }
                catch (NpgsqlException) when (!http.RequestAborted.IsCancellationRequested)
                {
                    // After a restart of PostgreSQL the pool still holds connections the server closed; the first lookup on
                    // each fails although the server is back. Drop the idle ones and look up once more on a fresh one.
                    http.RequestServices.GetRequiredService<Database.FusionDatabase>().DataSource.Clear();
                    caller = await resolver.ResolveAsync(secret, http.RequestAborted).ConfigureAwait(false);
                }
            }
            catch (Exception ex) when (TransientDatabaseError.Is(ex))
            {
                http.RequestServices.GetRequiredService<Database.FusionDatabase>().NoteFailure(ex);
                http.Response.Headers.RetryAfter = "5";
                return TypedResults.Problem(
                    title: "Service unavailable",
                    detail: "the key store cannot be reached; retry later",
                    statusCode: StatusCodes.Status503ServiceUnavailable);
            }
        }

        if (caller is null)
        {
            limiter.NoteFailedAuth(address);
            http.Response.Headers.WWWAuthenticate = "Bearer error=\"invalid_token\"";
            return TypedResults.Problem(
                title: "Authentication failed",
                detail: "header Authorization: unknown, revoked or expired API key",
                statusCode: StatusCodes.Status401Unauthorized);
        }

        if (await limiter.TryRequestAsync(caller).ConfigureAwait(false) is { } refused)
        {
            return refused.ToResult(http);
        }

        if (Array.IndexOf(roles, caller.Role) < 0)
        {
            return TypedResults.Problem(
                title: "Forbidden",
                detail: "this endpoint needs a key with role " + string.Join(" or ", roles.Select(RoleName)) + "; the key has role " + RoleName(caller.Role),
                statusCode: StatusCodes.Status403Forbidden);
        }

        caller.AttachTo(http);
        return null;
    }

    /// <summary>The role's name as stored and as the API spells it.</summary>
    public static string RoleName(ApiKeyRole role) => role switch
    {
        ApiKeyRole.Ingest => "ingest",
        ApiKeyRole.Read => "read",
        _ => "admin",
    };
}
