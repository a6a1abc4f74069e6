// The JSON options of alert payloads outside the HTTP pipeline (webhooks, stream frames).
using System.Text.Json;
using System.Text.Json.Serialization;

namespace FusionService.Alerts;

/// <summary>Serializer options equal to the host's HTTP JSON options (snake_case, nulls left out unless marked).</summary>
public static class AlertJson
{
    /// <summary>The options.</summary>
    public static JsonSerializerOptions Options { get; } = new(JsonSerializerDefaults.Web)
    {
        PropertyNamingPolicy = JsonNamingPolicy.SnakeCaseLower,
        DictionaryKeyPolicy = null,
        DefaultIgnoreCondition = JsonIgnoreCondition.WhenWritingNull,
    };

    /// <summary>Rule settings documents: as <see cref="Options"/>, but unknown fields are an error.</summary>
    public static JsonSerializerOptions StrictOptions { get; } = new(Options) { UnmappedMemberHandling = JsonUnmappedMemberHandling.Disallow };
}
