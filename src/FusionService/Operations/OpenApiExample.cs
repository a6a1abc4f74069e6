// An example request or response body for the OpenAPI document.
namespace FusionService.Operations;

/// <summary>
/// Endpoint metadata naming an example body kept as an embedded file under <c>Operations/Examples/</c>; the OpenAPI
/// document shows it under the operation's request body (<paramref name="StatusCode"/> null) or under that response.
/// The JSON examples are real answers of the demo fleet (invented data), trimmed to a few array entries;
/// <c>OpenApiExampleTests</c> reads each one back into the endpoint's declared type.
/// </summary>
/// <param name="StatusCode">Response status, or null for the request body.</param>
/// <param name="ContentType">Media type, e.g. <c>application/json</c>.</param>
/// <param name="FileName">File name under <c>Operations/Examples/</c>.</param>
public sealed record OpenApiExample(int? StatusCode, string ContentType, string FileName)
{
    /// <summary>The example's text.</summary>
    public string Text()
    {
        using var stream = typeof(OpenApiExample).Assembly.GetManifestResourceStream("FusionService.Operations.Examples." + FileName)
            ?? throw new InvalidOperationException("no embedded OpenAPI example named " + FileName);
        using var reader = new StreamReader(stream);
        return reader.ReadToEnd();
    }
}
