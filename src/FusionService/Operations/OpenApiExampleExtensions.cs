// Attaching example bodies to endpoints and writing them into the OpenAPI document.
using System.Text.Json.Nodes;
using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;

namespace FusionService.Operations;

/// <summary>Adds <see cref="OpenApiExample"/> metadata to endpoints and copies it into the OpenAPI document.</summary>
public static class OpenApiExampleExtensions
{
    /// <summary>Shows <paramref name="fileName"/> as the example of the response <paramref name="statusCode"/>.</summary>
    public static RouteHandlerBuilder WithResponseExample(this RouteHandlerBuilder builder, int statusCode, string fileName, string contentType = "application/json") =>
        builder.WithMetadata(new OpenApiExample(statusCode, contentType, fileName));

    /// <summary>Shows <paramref name="fileName"/> as the example of the request body.</summary>
    public static RouteHandlerBuilder WithRequestExample(this RouteHandlerBuilder builder, string fileName, string contentType = "application/json") =>
        builder.WithMetadata(new OpenApiExample(null, contentType, fileName));

    /// <summary>The operation transformer that writes the examples (JSON parsed, text as a string).</summary>
    public static Task AddExamplesAsync(OpenApiOperation operation, OpenApiOperationTransformerContext context, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(operation);
        ArgumentNullException.ThrowIfNull(context);
        foreach (var example in context.Description.ActionDescriptor.EndpointMetadata.OfType<OpenApiExample>())
        {
            string text = example.Text();
            JsonNode? value = example.ContentType.EndsWith("json", StringComparison.Ordinal) ? JsonNode.Parse(text) : JsonValue.Create(text);
            IDictionary<string, OpenApiMediaType>? content;
            if (example.StatusCode is { } status)
            {
                operation.Responses ??= [];
                string key = status.ToString(System.Globalization.CultureInfo.InvariantCulture);
                if (!operation.Responses.TryGetValue(key, out var response))
                {
                    response = new OpenApiResponse { Description = "OK" };
                    operation.Responses[key] = response;
                }

                if (response is not OpenApiResponse concrete)
                {
                    continue;
                }

                content = concrete.Content ??= new Dictionary<string, OpenApiMediaType>(StringComparer.Ordinal);
            }
            else
            {
                if (operation.RequestBody is not OpenApiRequestBody body)
                {
                    continue;
                }

                content = body.Content ??= new Dictionary<string, OpenApiMediaType>(StringComparer.Ordinal);
            }

            if (!content.TryGetValue(example.ContentType, out var media))
            {
                media = new OpenApiMediaType();
                content[example.ContentType] = media;
            }

            media.Example = value;
        }

        return Task.CompletedTask;
    }
}
