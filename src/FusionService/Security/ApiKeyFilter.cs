// Bearer-key authentication and role check for one endpoint.
using FusionService.Storage.Fleets;
using Npgsql;

namespace FusionService.Security;

/// <summary>
/// Requires <c>Authorization: Bearer &lt;key&gt;</c> with one of <paramref name="roles"/>: 401 without a key or with an
/// unknown one, 403 for a valid key of another role, 503 when the key store cannot be reached.
/// </summary>
internal sealed class ApiKeyFilter(ApiKeyRole[] roles) : IEndpointFilter
{
    public async ValueTask<object?> InvokeAsync(EndpointFilterInvocationContext context, EndpointFilterDelegate next)
    {
        var http = context.HttpContext;
        var result = await AuthenticateAsync(http, roles).ConfigureAwait(false);
        return result ?? await next(context).ConfigureAwait(false);
    }

    /// <summary>Attaches the caller to <paramref name="http"/>, or returns the problem result to answer with.</summary>
    public static async Task<IResult?> AuthenticateAsync(HttpContext http, ApiKeyRole[] roles)
    {
        string header = http.Request.Headers.Authorization.ToString();
        const string Scheme = "Bearer ";
        if (!header.StartsWith(Scheme, StringComparison.OrdinalIgnoreCase) || header.Length == Scheme.Length)
        {
            http.Response.Headers.WWWAuthenticate = "Bearer";
            return TypedResults.Problem(
                title: "Authentication required",
                detail: "header Authorization: missing; send 'Authorization: Bearer <API key>'",
                statusCode: StatusCodes.Status401Unauthorized);
        }

        ApiCaller? caller;
        try
        {
            var resolver = http.RequestServices.GetRequiredService<ApiKeyResolver>();
            caller = await resolver.ResolveAsync(header[Scheme.Length..].Trim(), http.RequestAborted).ConfigureAwait(false);
        }
        catch (Exception ex) when (ex is NpgsqlException or InvalidOperationException or TimeoutException)
        {
            http.RequestServices.GetRequiredService<Database.FusionDatabase>().NoteFailure(ex);
            http.Response.Headers.RetryAfter = "5";
            return TypedResults.Problem(
                title: "Service unavailable",
                detail: "the key store cannot be reached; retry later",
                statusCode: StatusCodes.Status503ServiceUnavailable);
        }

        if (caller is null)
        {
            http.Response.Headers.WWWAuthenticate = "Bearer error=\"invalid_token\"";
            return TypedResults.Problem(
                title: "Authentication failed",
                detail: "header Authorization: unknown or revoked API key",
                statusCode: StatusCodes.Status401Unauthorized);
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
