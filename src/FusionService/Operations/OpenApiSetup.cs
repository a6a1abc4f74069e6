// The OpenAPI document's description, cautions and security scheme.
using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;

namespace FusionService.Operations;

/// <summary>Registers the OpenAPI document <c>v1</c> (served at <c>/openapi/v1.json</c>, committed as
/// <c>openapi/fusionservice.v1.json</c>).</summary>
public static class OpenApiSetup
{
    /// <summary>Document name.</summary>
    public const string DocumentName = "v1";

    /// <summary>Adds the document with its description and the bearer-key scheme.</summary>
    public static IServiceCollection AddFusionOpenApi(this IServiceCollection services)
    {
        services.AddOpenApi(DocumentName, options => options.AddDocumentTransformer((document, _, _) =>
        {
            document.Info = new OpenApiInfo
            {
                Title = "FusionService API",
                Version = "v1",
                Description =
                    "Fuses delivery-van GNSS, wheel-speed and IMU telemetry into position, heading and speed estimates with an "
                    + "extended Kalman filter. Authenticate with 'Authorization: Bearer <API key>'; a key belongs to one fleet and "
                    + "has one role (ingest, read or admin). CAUTIONS: every position, heading and speed is an estimate with the "
                    + "stated uncertainty - never use it for safety-critical navigation or collision avoidance. Vehicle locations "
                    + "reveal where drivers are: they are personal data, to be processed only on a lawful basis, kept no longer "
                    + "than needed and shown only to those who need them.",
            };
            document.Components ??= new OpenApiComponents();
            document.Components.SecuritySchemes ??= new Dictionary<string, IOpenApiSecurityScheme>(StringComparer.Ordinal);
            document.Components.SecuritySchemes["bearer"] = new OpenApiSecurityScheme
            {
                Type = SecuritySchemeType.Http,
                Scheme = "bearer",
                Description = "API key created with 'keys create'.",
            };
            return Task.CompletedTask;
        }).AddOperationTransformer(OpenApiText.ApplyAsync).AddSchemaTransformer(OpenApiText.OmittedNullsAsync).AddOperationTransformer(OpenApiExampleExtensions.AddExamplesAsync));
        return services;
    }
}
