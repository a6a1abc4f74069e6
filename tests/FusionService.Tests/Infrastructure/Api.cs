// Small HTTP helpers for the service tests.
using System.Net.Http.Json;
using System.Text;
using System.Text.Json;
using FusionService.Ingest;
using FusionService.Vehicles;

namespace FusionService.Tests.Infrastructure;

/// <summary>JSON options of the API and request helpers.</summary>
internal static class Api
{
    public static readonly JsonSerializerOptions Json = new(JsonSerializerDefaults.Web) { PropertyNamingPolicy = JsonNamingPolicy.SnakeCaseLower };

    public static Task<HttpResponseMessage> PostJsonAsync(this HttpClient client, string body) =>
        client.PostAsync("/v1/telemetry", new StringContent(body, Encoding.UTF8, "application/json"));

    public static async Task<IngestResponse> IngestOkAsync(this HttpClient client, string body)
    {
        using var response = await client.PostJsonAsync(body);
        string text = await response.Content.ReadAsStringAsync();
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode}: {text}");
        return JsonSerializer.Deserialize<IngestResponse>(text, Json)!;
    }

    public static async Task<VehicleStateResponse> StateAsync(this HttpClient client, string vehicle)
    {
        using var response = await client.GetAsync("/v1/vehicles/" + vehicle + "/state");
        string text = await response.Content.ReadAsStringAsync();
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode}: {text}");
        return JsonSerializer.Deserialize<VehicleStateResponse>(text, Json)!;
    }

    public static async Task<JsonElement> ProblemAsync(this HttpResponseMessage response)
    {
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        return (await response.Content.ReadFromJsonAsync<JsonElement>())!;
    }
}
