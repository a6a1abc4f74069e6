// The OpenAPI document as people read it: plain summaries and descriptions, no C# leaking through, examples that
// validate against their schemas.
using System.Globalization;
using System.Text.Json.Nodes;
using System.Text.RegularExpressions;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Operations;

[Collection(ServiceTests.Name)]
public sealed partial class OpenApiDocumentTests(ServiceFixture fixture)
{
    // Words in CamelCase that are names of the trade or of a standard, not of our code.
    // Names of standards and of their own types (FeatureCollection: GeoJSON's object type, RFC 7946 section 3.3).
    private static readonly HashSet<string> AllowedCamelCase = new(StringComparer.Ordinal) { "WebSocket", "WebSockets", "GeoJSON", "OpenAPI", "PostgreSQL", "FeatureCollection" };

    [Fact]
    public async Task Issue15_every_operation_has_a_written_summary_and_description()
    {
        var document = await ServedAsync();
        int operations = 0;
        foreach (var (route, item) in document["paths"]!.AsObject())
        {
            foreach (var (method, operation) in item!.AsObject())
            {
                operations++;
                string where = method.ToUpperInvariant() + " " + route;
                string? summary = (string?)operation!["summary"];
                Assert.False(string.IsNullOrWhiteSpace(summary), where + ": no summary");
                Assert.False(summary!.StartsWith("Handles", StringComparison.OrdinalIgnoreCase), where + ": summary is the handler's note for developers: " + summary);
                Assert.False(string.IsNullOrWhiteSpace((string?)operation["description"]), where + ": no description");
                foreach (var parameter in operation["parameters"]?.AsArray() ?? [])
                {
                    Assert.False(string.IsNullOrWhiteSpace((string?)parameter!["description"]), where + ": parameter " + (string?)parameter["name"] + " has no description");
                }
            }
        }

        Assert.True(operations >= 23, "only " + operations + " operations in the document");
    }

    [Fact]
    public async Task Issue15_no_description_names_a_csharp_type_or_carries_a_note_for_developers()
    {
        var document = await ServedAsync();
        var problems = new List<string>();
        foreach (var (where, text) in Texts(document))
        {
            problems.AddRange(Problems(text).Select(p => where + ": " + p));
        }

        Assert.True(problems.Count == 0, string.Join("\n", problems));
    }

    [Fact]
    public async Task Issue15_the_checks_catch_what_the_issue_found()
    {
        // The texts the issue quoted from the document before the fix; each must be caught by the same checks.
        Assert.NotEmpty(Problems("at least int GatedBurstRule.MinCount measurements within double GatedBurstRule.WindowS seconds"));
        Assert.NotEmpty(Problems("Only the sensors in IReadOnlyList<string> GatedBurstRule.Sensors count"));
        Assert.NotEmpty(Problems("usual (from memory)"));
        Assert.NotEmpty(Problems("(a design choice, not from a source)"));
        Assert.NotEmpty(Problems("Checked by VehicleSilenceScanner every few seconds"));
        Assert.Empty(Problems("Open a WebSocket; Tracks:MaxWindowHours (default 24 h); GeoJSON or GPX."));

        var schema = JsonNode.Parse("""{"type":"object","required":["a"],"properties":{"a":{"type":"integer"},"t":{"type":"string","format":"date-time"}}}""")!.AsObject();
        var root = new JsonObject();
        Assert.Empty(Validate(JsonNode.Parse("""{"a":1,"t":"2026-05-01T08:00:00Z"}"""), schema, root, "$"));
        Assert.NotEmpty(Validate(JsonNode.Parse("""{"t":"2026-05-01T08:00:00Z"}"""), schema, root, "$"));
        Assert.NotEmpty(Validate(JsonNode.Parse("""{"a":1.5}"""), schema, root, "$"));
        Assert.NotEmpty(Validate(JsonNode.Parse("""{"a":1,"b":2}"""), schema, root, "$"));
        Assert.NotEmpty(Validate(JsonNode.Parse("""{"a":1,"t":"yesterday"}"""), schema, root, "$"));
        await Task.CompletedTask;
    }

    [Fact]
    public async Task Issue15_every_example_validates_against_its_schema()
    {
        var document = await ServedAsync();
        var root = document.AsObject();
        int validated = 0;
        var problems = new List<string>();
        foreach (var (route, item) in document["paths"]!.AsObject())
        {
            foreach (var (method, operation) in item!.AsObject())
            {
                var bodies = new List<(string Where, JsonObject Content)>();
                if (operation!["requestBody"]?["content"] is JsonObject request)
                {
                    bodies.Add((method + " " + route + " request", request));
                }

                foreach (var (status, response) in operation["responses"]?.AsObject() ?? [])
                {
                    if (response!["content"] is JsonObject content)
                    {
                        bodies.Add((method + " " + route + " " + status, content));
                    }
                }

                foreach (var (where, content) in bodies)
                {
                    foreach (var (contentType, media) in content)
                    {
                        if (media!["example"] is not { } example || media["schema"] is not JsonObject schema || !contentType.EndsWith("json", StringComparison.Ordinal))
                        {
                            continue;
                        }

                        problems.AddRange(Validate(example, schema, root, "$").Select(p => where + " " + contentType + ": " + p));
                        validated++;
                    }
                }
            }
        }

        Assert.True(problems.Count == 0, string.Join("\n", problems));

        // The typed examples of OpenApiExampleTests (14) plus the vehicle list and state examples of issue 15.
        Assert.True(validated >= 16, "only " + validated + " examples validated");
    }

    private async Task<JsonNode> ServedAsync()
    {
        using var client = fixture.Client(null);
        return JsonNode.Parse(await client.GetStringAsync("/openapi/v1.json"))!;
    }

    /// <summary>Every human-readable text of the document with where it is.</summary>
    private static IEnumerable<(string Where, string Text)> Texts(JsonNode document)
    {
        yield return ("info", (string?)document["info"]!["description"] ?? string.Empty);
        foreach (var (route, item) in document["paths"]!.AsObject())
        {
            foreach (var (method, operation) in item!.AsObject())
            {
                string where = method.ToUpperInvariant() + " " + route;
                yield return (where + " summary", (string?)operation!["summary"] ?? string.Empty);
                yield return (where + " description", (string?)operation["description"] ?? string.Empty);
                foreach (var parameter in operation["parameters"]?.AsArray() ?? [])
                {
                    yield return (where + " parameter " + (string?)parameter!["name"], (string?)parameter["description"] ?? string.Empty);
                }

                foreach (var (status, response) in operation["responses"]?.AsObject() ?? [])
                {
                    yield return (where + " " + status, (string?)response!["description"] ?? string.Empty);
                }
            }
        }

        foreach (var (name, schema) in document["components"]!["schemas"]!.AsObject())
        {
            yield return (name, (string?)schema!["description"] ?? string.Empty);
            foreach (var (property, value) in schema["properties"]?.AsObject() ?? [])
            {
                yield return (name + "." + property, (string?)value!["description"] ?? string.Empty);
                foreach (var alternative in value["oneOf"]?.AsArray() ?? [])
                {
                    yield return (name + "." + property, (string?)alternative!["description"] ?? string.Empty);
                }
            }
        }
    }

    /// <summary>What is wrong with a text written for API users (empty when nothing).</summary>
    private static List<string> Problems(string text)
    {
        var found = new List<string>();
        found.AddRange(TypedMember().Matches(text).Select(m => "C# member with its type: " + m.Value));
        found.AddRange(GenericType().Matches(text).Select(m => "C# type: " + m.Value));
        found.AddRange(DeveloperNote().Matches(text).Select(m => "note for developers: " + m.Value));
        found.AddRange(CamelCase().Matches(text).Where(m => !AllowedCamelCase.Contains(m.Value)).Select(m => "C# name: " + m.Value));
        return found;
    }

    // "double GatedBurstRule.WindowS", "int X.MinCount" (how the XML documentation renders a cref to a member).
    [GeneratedRegex(@"\b(double|int|long|bool|float|decimal|string|Guid|DateTimeOffset|TimeSpan)\s+[A-Z]\w*\.[A-Z]\w*")]
    private static partial Regex TypedMember();

    // "IReadOnlyList<string>", "List<...>", also escaped as &lt;.
    [GeneratedRegex(@"\bI?(ReadOnly)?(List|Collection|Enumerable|Dictionary)(<|&lt;)|<string>|&lt;string&gt;")]
    private static partial Regex GenericType();

    [GeneratedRegex(@"from memory|design choice|not from a source|not taken from a published source|to be moved", RegexOptions.IgnoreCase)]
    private static partial Regex DeveloperNote();

    // A word of two or more capitalised parts (GatedBurstRule, VehicleSilenceScanner), not a configuration key
    // (Tracks:MaxWindowHours, Webhooks:MaxAttempts) and not quoted code-like text.
    [GeneratedRegex(@"(?<![:\w.`'/-])[A-Z][a-z0-9]+(?:[A-Z][a-z0-9]*)+\b")]
    private static partial Regex CamelCase();

    /// <summary>
    /// Checks a value against the part of JSON Schema (draft 2020-12, the dialect of OpenAPI 3.1) this document uses: type,
    /// properties, required, items, oneOf, anyOf, enum, pattern, the formats date-time and uuid, and $ref into
    /// components. A member the schema does not list fails unless the schema allows additional properties or lists no
    /// properties at all (the free-form details object).
    /// </summary>
    private static List<string> Validate(JsonNode? value, JsonObject schema, JsonObject root, string path)
    {
        var errors = new List<string>();
        if ((string?)schema["$ref"] is { } reference)
        {
            var target = reference.Split('/').Skip(1).Aggregate((JsonNode?)root, (node, part) => node?[part]) as JsonObject;
            if (target is null)
            {
                errors.Add(path + ": unresolved " + reference);
                return errors;
            }

            errors.AddRange(Validate(value, target, root, path));
        }

        if (schema["oneOf"] is JsonArray oneOf)
        {
            int passing = oneOf.Count(s => Validate(value, s!.AsObject(), root, path).Count == 0);
            if (passing != 1)
            {
                errors.Add(path + ": matches " + passing + " of the oneOf alternatives, not exactly one");
            }
        }

        if (schema["anyOf"] is JsonArray anyOf && !anyOf.Any(s => Validate(value, s!.AsObject(), root, path).Count == 0))
        {
            errors.Add(path + ": matches none of the anyOf alternatives");
        }

        string kind = KindOf(value);
        if (schema["type"] is { } type)
        {
            var allowed = type is JsonArray list ? list.Select(t => (string)t!).ToList() : [(string)type!];
            if (!allowed.Contains(kind) && !(kind == "integer" && allowed.Contains("number")))
            {
                errors.Add(path + ": is " + kind + ", schema allows " + string.Join("|", allowed));
                return errors;
            }
        }

        if (schema["enum"] is JsonArray values && !values.Any(v => JsonNode.DeepEquals(v, value)))
        {
            errors.Add(path + ": " + value?.ToJsonString() + " is not one of " + values.ToJsonString());
        }

        if (kind == "string")
        {
            string text = value!.GetValue<string>();
            if ((string?)schema["pattern"] is { } pattern && !Regex.IsMatch(text, pattern))
            {
                errors.Add(path + ": '" + text + "' does not match " + pattern);
            }

            switch ((string?)schema["format"])
            {
                case "date-time" when !DateTimeOffset.TryParse(text, CultureInfo.InvariantCulture, DateTimeStyles.None, out _) || !text.Contains('T', StringComparison.Ordinal):
                    errors.Add(path + ": '" + text + "' is not a date-time");
                    break;
                case "uuid" when !Guid.TryParse(text, out _):
                    errors.Add(path + ": '" + text + "' is not a uuid");
                    break;
            }
        }

        if (kind == "object")
        {
            var members = value!.AsObject();
            foreach (var required in schema["required"]?.AsArray() ?? [])
            {
                if (!members.ContainsKey((string)required!))
                {
                    errors.Add(path + ": required member " + (string?)required + " is missing");
                }
            }

            var properties = schema["properties"] as JsonObject;
            foreach (var (name, member) in members)
            {
                if (properties?[name] is JsonObject property)
                {
                    errors.AddRange(Validate(member, property, root, path + "." + name));
                }
                else if (schema["additionalProperties"] is JsonObject additional)
                {
                    errors.AddRange(Validate(member, additional, root, path + "." + name));
                }
                else if (properties is not null && schema["additionalProperties"] is null)
                {
                    errors.Add(path + ": member " + name + " is not in the schema");
                }
            }
        }

        if (kind == "array" && schema["items"] is JsonObject items)
        {
            var array = value!.AsArray();
            for (int i = 0; i < array.Count; i++)
            {
                errors.AddRange(Validate(array[i], items, root, path + "[" + i.ToString(CultureInfo.InvariantCulture) + "]"));
            }
        }

        return errors;
    }

    private static string KindOf(JsonNode? value) => value switch
    {
        null => "null",
        JsonObject => "object",
        JsonArray => "array",
        JsonValue v when v.GetValueKind() == System.Text.Json.JsonValueKind.String => "string",
        JsonValue v when v.GetValueKind() is System.Text.Json.JsonValueKind.True or System.Text.Json.JsonValueKind.False => "boolean",
        JsonValue v => v.ToJsonString().IndexOfAny(['.', 'e', 'E']) < 0 ? "integer" : "number",
        _ => "unknown",
    };
}
