// The fleet administration endpoints: API keys and the vehicle quota.
using System.Globalization;
using System.Text.Json;
using FusionService.Database;
using FusionService.Http;
using FusionService.Security;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.HttpResults;
using Npgsql;

namespace FusionService.Fleets;

/// <summary>Maps <c>/v1/keys</c> and <c>/v1/fleet/quota</c>; every one needs an admin key and acts on the caller's fleet only.</summary>
public static class FleetEndpoints
{
    private const string SameFleet = "Acts on the caller's fleet only: another fleet's key id is 404. Needs an admin key.";

    /// <summary>Maps the fleet administration endpoints.</summary>
    public static IEndpointRouteBuilder MapFleetEndpoints(this IEndpointRouteBuilder app)
    {
        var keys = app.MapGroup("/v1/keys").WithTags("Keys");
        keys.MapGet("/", ListKeys)
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("ListApiKeys")
            .WithSummary("List the fleet's API keys")
            .WithDescription("Every key of the caller's fleet, oldest first, with role, label, state (active, expired, revoked), "
                + "creation, expiry and revocation times. Secrets are never shown: the service keeps only their SHA-256. Needs an admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .RetryOnStaleConnection();
        keys.MapPost("/", CreateKey)
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("CreateApiKey")
            .WithSummary("Create an API key for the fleet")
            .WithDescription("Body: {\"role\": \"ingest\" | \"read\" | \"admin\", \"label\": text (optional, at most 200 characters), "
                + "\"expires_at\": RFC 3339 time or Unix milliseconds (optional, in the future; without it the key does not expire)}. "
                + "201 with the key and its secret, shown only in this answer. 400 names the invalid field. Needs an admin key.")
            .Accepts<JsonElement>("application/json")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        keys.MapPost("/{id}/revoke", RevokeKey)
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("RevokeApiKey")
            .WithSummary("Revoke one of the fleet's API keys")
            .WithDescription("The key is refused from now on: at once by this process, by other processes of the service within "
                + "Security:KeyCacheSeconds (default 30 s). Its open WebSocket streams are closed with status 1008, at once here and "
                + "within Security:StreamKeyRecheckSeconds (default 30 s) elsewhere. Revoking a revoked key changes nothing. " + SameFleet)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        keys.MapPost("/{id}/rotate", RotateKey)
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("RotateApiKey")
            .WithSummary("Replace one of the fleet's API keys by a new one")
            .WithDescription("Creates a key with the old key's role, label and expiry and answers 201 with its secret (shown only in "
                + "this answer). Body (optional): {\"grace_s\": seconds from 0 to 2592000, default 0}: the old key keeps working that long, "
                + "so devices can switch over, then expires; 0 revokes it at once. Only an active key can be rotated. " + SameFleet)
            .Accepts<JsonElement>("application/json")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);

        var fleet = app.MapGroup("/v1/fleet").WithTags("Keys");
        fleet.MapGet("/quota", GetQuota)
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("GetVehicleQuota")
            .WithSummary("The fleet's vehicle quota")
            .WithDescription("How many distinct vehicles the fleet may have (max_vehicles; source fleet when set for this fleet, "
                + "default when the service's Tenancy:DefaultMaxVehicles applies) and how many it has. Messages of a new vehicle "
                + "beyond the quota are rejected with field vehicle and the quota in the reason. Needs an admin key.")
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .RetryOnStaleConnection();
        fleet.MapPut("/quota", PutQuota)
            .RequireApiKey(ApiKeyRole.Admin)
            .WithName("PutVehicleQuota")
            .WithSummary("Set the fleet's vehicle quota")
            .WithDescription("Body: {\"max_vehicles\": whole number from 1 to 10000000, or null for the service default}. Lowering it "
                + "below the vehicles the fleet has keeps them all sending and refuses only new ones. Applies at once in this "
                + "process and within Tenancy:QuotaCacheSeconds (default 30 s) in others. Needs an admin key.")
            .Accepts<JsonElement>("application/json")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        return app;
    }

    /// <summary>Lists the keys of the caller's fleet.</summary>
    internal static async Task<Ok<ApiKeyListResponse>> ListKeys(HttpContext http, FusionDatabase database, TimeProvider time)
    {
        var caller = ApiCaller.Of(http);
        var keys = await new FleetAdmin(database.DataSource).ListApiKeysAsync(caller.FleetId, http.RequestAborted).ConfigureAwait(false);
        var now = time.GetUtcNow();
        return TypedResults.Ok(new ApiKeyListResponse([.. keys.Select(k => ApiKeyResponse.From(k, now))]));
    }

    /// <summary>Creates a key for the caller's fleet and answers its secret once.</summary>
    internal static async Task<Results<Created<CreatedApiKeyResponse>, ProblemHttpResult>> CreateKey(HttpContext http, FusionDatabase database, TimeProvider time)
    {
        var caller = ApiCaller.Of(http);
        var (body, bodyProblem) = await ReadObjectAsync(http, required: true).ConfigureAwait(false);
        if (bodyProblem is not null)
        {
            return bodyProblem;
        }

        ApiKeyRole? role = null;
        string label = string.Empty;
        DateTimeOffset? expiresAt = null;
        var now = time.GetUtcNow();
        foreach (var property in body!.Value.EnumerateObject())
        {
            switch (property.Name)
            {
                case "role":
                    role = TextOf(property.Value) is { } roleText ? ParseRole(roleText) : null;
                    if (role is null)
                    {
                        return BadRequest("role: must be \"ingest\", \"read\" or \"admin\"");
                    }

                    break;
                case "label":
                    if (TextOf(property.Value) is not { Length: <= 200 } labelText || !IsStorableText(labelText))
                    {
                        return BadRequest("label: must be a string of at most 200 characters, valid Unicode without NUL");
                    }

                    label = labelText;
                    break;
                case "expires_at" when property.Value.ValueKind == JsonValueKind.Null:
                    break;
                case "expires_at":
                    string? text = property.Value.ValueKind switch
                    {
                        JsonValueKind.String => TextOf(property.Value),
                        JsonValueKind.Number => property.Value.GetRawText(),
                        _ => null,
                    };
                    if (QueryTime.Check(text, out long expiresUs) is { } timeProblem)
                    {
                        return BadRequest("expires_at: " + timeProblem);
                    }

                    expiresAt = QueryTime.ToTime(expiresUs);
                    if (expiresAt <= now)
                    {
                        return BadRequest("expires_at: must be in the future");
                    }

                    break;
                default:
                    return BadRequest(property.Name + ": unknown field; the fields are role, label and expires_at");
            }
        }

        if (role is not { } chosen)
        {
            return BadRequest("role: is required (\"ingest\", \"read\" or \"admin\")");
        }

        var admin = new FleetAdmin(database.DataSource);
        var created = await admin.CreateApiKeyAsync(caller.FleetId, chosen, label, expiresAt, http.RequestAborted).ConfigureAwait(false);
        var info = await admin.GetApiKeyAsync(caller.FleetId, created.KeyId, http.RequestAborted).ConfigureAwait(false);
        return TypedResults.Created("/v1/keys", new CreatedApiKeyResponse(ApiKeyResponse.From(info!, now), created.Secret));
    }

    /// <summary>Revokes a key of the caller's fleet and closes its open streams.</summary>
    internal static async Task<Results<Ok<ApiKeyResponse>, ProblemHttpResult>> RevokeKey(
        string id, HttpContext http, FusionDatabase database, ApiKeyResolver resolver, StreamKeyWatch streams, TimeProvider time)
    {
        var caller = ApiCaller.Of(http);
        if (!Guid.TryParseExact(id, "D", out Guid keyId))
        {
            return BadRequest("id: must be a key id (a UUID such as 01a2418c-ba44-7f85-ad79-775bc062760a)");
        }

        var key = await new FleetAdmin(database.DataSource).RevokeApiKeyAsync(caller.FleetId, keyId, http.RequestAborted).ConfigureAwait(false);
        if (key is null)
        {
            return NotFound(id);
        }

        resolver.Forget(keyId);
        streams.KeyRetired(keyId);
        return TypedResults.Ok(ApiKeyResponse.From(key, time.GetUtcNow()));
    }

    /// <summary>Replaces a key of the caller's fleet by a new one and answers the new secret once.</summary>
    internal static async Task<Results<Created<CreatedApiKeyResponse>, ProblemHttpResult>> RotateKey(
        string id, HttpContext http, FusionDatabase database, ApiKeyResolver resolver, StreamKeyWatch streams, TimeProvider time)
    {
        var caller = ApiCaller.Of(http);
        if (!Guid.TryParseExact(id, "D", out Guid keyId))
        {
            return BadRequest("id: must be a key id (a UUID such as 01a2418c-ba44-7f85-ad79-775bc062760a)");
        }

        var (body, bodyProblem) = await ReadObjectAsync(http, required: false).ConfigureAwait(false);
        if (bodyProblem is not null)
        {
            return bodyProblem;
        }

        int graceS = 0;
        if (body is { } document)
        {
            foreach (var property in document.EnumerateObject())
            {
                if (property.Name != "grace_s")
                {
                    return BadRequest(property.Name + ": unknown field; the only field is grace_s");
                }

                if (property.Value.ValueKind != JsonValueKind.Number || !property.Value.TryGetInt32(out graceS) || graceS < 0 || graceS > 2_592_000)
                {
                    return BadRequest("grace_s: must be a whole number of seconds from 0 to 2592000 (30 days)");
                }
            }
        }

        var admin = new FleetAdmin(database.DataSource);
        var created = await admin.RotateApiKeyAsync(caller.FleetId, keyId, graceS, http.RequestAborted).ConfigureAwait(false);
        if (created is not { } fresh)
        {
            return (await admin.GetApiKeyAsync(caller.FleetId, keyId, http.RequestAborted).ConfigureAwait(false)) is null
                ? NotFound(id)
                : BadRequest("id: the key is revoked or expired; only an active key can be rotated");
        }

        resolver.Forget(keyId);
        if (graceS == 0)
        {
            streams.KeyRetired(keyId);
        }

        var now = time.GetUtcNow();
        var newKey = await admin.GetApiKeyAsync(caller.FleetId, fresh.KeyId, http.RequestAborted).ConfigureAwait(false);
        var oldKey = await admin.GetApiKeyAsync(caller.FleetId, keyId, http.RequestAborted).ConfigureAwait(false);
        return TypedResults.Created("/v1/keys", new CreatedApiKeyResponse(ApiKeyResponse.From(newKey!, now), fresh.Secret, ApiKeyResponse.From(oldKey!, now)));
    }

    /// <summary>Shows the vehicle quota of the caller's fleet.</summary>
    internal static async Task<Ok<VehicleQuotaResponse>> GetQuota(HttpContext http, FusionDatabase database, Microsoft.Extensions.Options.IOptions<TenancyOptions> options) =>
        TypedResults.Ok(await QuotaOfAsync(ApiCaller.Of(http).FleetId, database, options.Value, http.RequestAborted).ConfigureAwait(false));

    /// <summary>Sets the vehicle quota of the caller's fleet.</summary>
    internal static async Task<Results<Ok<VehicleQuotaResponse>, ProblemHttpResult>> PutQuota(
        HttpContext http, FusionDatabase database, FleetVehicleQuota quota, Microsoft.Extensions.Options.IOptions<TenancyOptions> options)
    {
        var caller = ApiCaller.Of(http);
        var (body, bodyProblem) = await ReadObjectAsync(http, required: true).ConfigureAwait(false);
        if (bodyProblem is not null)
        {
            return bodyProblem;
        }

        int? max = null;
        bool seen = false;
        foreach (var property in body!.Value.EnumerateObject())
        {
            if (property.Name != "max_vehicles")
            {
                return BadRequest(property.Name + ": unknown field; the only field is max_vehicles");
            }

            seen = true;
            if (property.Value.ValueKind == JsonValueKind.Null)
            {
                continue;
            }

            if (property.Value.ValueKind != JsonValueKind.Number || !property.Value.TryGetInt32(out int value) || value < 1 || value > 10_000_000)
            {
                return BadRequest("max_vehicles: must be a whole number from 1 to 10000000, or null for the service default");
            }

            max = value;
        }

        if (!seen)
        {
            return BadRequest("max_vehicles: is required (a whole number, or null for the service default)");
        }

        await new FleetAdmin(database.DataSource).SetVehicleQuotaAsync(caller.FleetId, max, http.RequestAborted).ConfigureAwait(false);
        quota.Forget(caller.FleetId);
        return TypedResults.Ok(await QuotaOfAsync(caller.FleetId, database, options.Value, http.RequestAborted).ConfigureAwait(false));
    }

    /// <summary>The quota of a fleet as the API shows it.</summary>
    internal static async Task<VehicleQuotaResponse> QuotaOfAsync(Guid fleetId, FusionDatabase database, TenancyOptions options, CancellationToken cancellationToken)
    {
        var admin = new FleetAdmin(database.DataSource);
        int? own = await admin.GetVehicleQuotaAsync(fleetId, cancellationToken).ConfigureAwait(false);
        int vehicles = (await admin.VehicleIdsAsync(fleetId, cancellationToken).ConfigureAwait(false)).Count;
        return new VehicleQuotaResponse(own ?? options.DefaultMaxVehicles, own is null ? "default" : "fleet", vehicles);
    }

    // A JSON string as text; null for another kind or for text .NET cannot hold (invalid UTF-8, an unpaired surrogate
    // escape such as "\ud800": System.Text.Json throws InvalidOperationException for them).
    private static string? TextOf(JsonElement value)
    {
        if (value.ValueKind != JsonValueKind.String)
        {
            return null;
        }

        try
        {
            return value.GetString();
        }
        catch (InvalidOperationException)
        {
            return null;
        }
    }

    // PostgreSQL text holds neither NUL nor an unpaired UTF-16 surrogate (a JSON escape such as "\ud800" gives one).
    private static bool IsStorableText(string text)
    {
        for (int i = 0; i < text.Length; i++)
        {
            char c = text[i];
            if (c == '\0' || char.IsLowSurrogate(c))
            {
                return false;
            }

            if (char.IsHighSurrogate(c))
            {
                if (i + 1 >= text.Length || !char.IsLowSurrogate(text[i + 1]))
                {
                    return false;
                }

                i++;
            }
        }

        return true;
    }

    private static ApiKeyRole? ParseRole(string text) => text switch
    {
        "ingest" => ApiKeyRole.Ingest,
        "read" => ApiKeyRole.Read,
        "admin" => ApiKeyRole.Admin,
        _ => null,
    };

    // The body as a JSON object (a clone; null when empty and not required), or the problem to answer.
    private static async Task<(JsonElement? Body, ProblemHttpResult? Problem)> ReadObjectAsync(HttpContext http, bool required)
    {
        using var buffer = new MemoryStream();
        await http.Request.Body.CopyToAsync(buffer, http.RequestAborted).ConfigureAwait(false);
        if (buffer.Length == 0)
        {
            return required ? (null, BadRequest("body: is required (a JSON object)")) : (null, null);
        }

        try
        {
            using var document = JsonDocument.Parse(buffer.ToArray());
            return document.RootElement.ValueKind == JsonValueKind.Object
                ? (document.RootElement.Clone(), null)
                : (null, BadRequest("body: must be a JSON object"));
        }
        catch (JsonException ex)
        {
            return (null, BadRequest("body: not valid JSON (" + ex.Message.Split('.')[0] + ")"));
        }
    }

    private static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(title: "Invalid request", detail: detail, statusCode: StatusCodes.Status400BadRequest);

    private static ProblemHttpResult NotFound(string id) =>
        TypedResults.Problem(title: "Not found", detail: "id: no API key '" + id + "' in this fleet", statusCode: StatusCodes.Status404NotFound);
}
