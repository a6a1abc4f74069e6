// Every example body in the OpenAPI document is read back into the type its endpoint declares.
using System.Text.Json;
using System.Text.Json.Serialization;
using FusionService.Operations;
using FusionService.Tests.Infrastructure;
using Microsoft.AspNetCore.Http.Metadata;
using Microsoft.AspNetCore.Routing;

namespace FusionService.Tests.Operations;

[Collection(ServiceTests.Name)]
public sealed class OpenApiExampleTests(ServiceFixture fixture)
{
    // The API's own JSON conventions (snake_case, nulls left out), strict on reading: an unknown member fails.
    private static readonly JsonSerializerOptions Strict = new(JsonSerializerDefaults.Web)
    {
        PropertyNamingPolicy = JsonNamingPolicy.SnakeCaseLower,
        DefaultIgnoreCondition = JsonIgnoreCondition.WhenWritingNull,
        UnmappedMemberHandling = JsonUnmappedMemberHandling.Disallow,
    };

    [Fact]
    public void Every_json_example_reads_back_into_the_declared_type_of_its_endpoint()
    {
        var endpoints = fixture.Host.Services.GetRequiredService<EndpointDataSource>().Endpoints;
        int checkedTyped = 0, examples = 0;
        foreach (var endpoint in endpoints)
        {
            foreach (var example in endpoint.Metadata.OfType<OpenApiExample>())
            {
                examples++;
                string text = example.Text();
                Assert.False(string.IsNullOrWhiteSpace(text), example.FileName);
                if (!example.ContentType.EndsWith("json", StringComparison.Ordinal))
                {
                    continue;
                }

                Type? type = example.StatusCode is { } status
                    ? endpoint.Metadata.OfType<IProducesResponseTypeMetadata>().FirstOrDefault(p => p.StatusCode == status && p.Type is not null && p.Type != typeof(void))?.Type
                    : endpoint.Metadata.OfType<IAcceptsMetadata>().FirstOrDefault(a => a.RequestType is not null)?.RequestType;
                if (type is null)
                {
                    // A streamed body (the track) declares no type: the example must still be JSON.
                    using var _ = JsonDocument.Parse(text);
                    continue;
                }

                // Read into the type and written back, the example must come out unchanged: a member the type lacks fails
                // the read, a member the example lacks comes back as a default value and fails the comparison.
                object? value = JsonSerializer.Deserialize(text, type, Strict);
                Assert.NotNull(value);
                var written = System.Text.Json.Nodes.JsonNode.Parse(JsonSerializer.Serialize(value, type, Strict));
                var original = System.Text.Json.Nodes.JsonNode.Parse(text);
                Assert.True(
                    System.Text.Json.Nodes.JsonNode.DeepEquals(original, written),
                    example.FileName + " does not round-trip through " + type.Name + ":\n" + written?.ToJsonString());
                checkedTyped++;
            }
        }

        // 19 examples on the vehicle (since issue 15), history, audit, NMEA, alert and webhook endpoints (dead letters and
        // re-queue since issue 14) and the fleet's receivers (issue 12); all but the track and the NMEA text typed.
        Assert.Equal(19, examples);
        Assert.Equal(17, checkedTyped);
    }
}
