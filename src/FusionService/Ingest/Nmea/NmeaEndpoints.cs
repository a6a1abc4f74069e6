// POST /v1/vehicles/{vehicle}/nmea: NMEA 0183 GGA and RMC sentences through the ordinary ingest path.
using System.Globalization;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using FusionService.Estimation.Time;
using FusionService.Security;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.Options;

using FusionService.Operations;

namespace FusionService.Ingest.Nmea;

/// <summary>Maps <c>POST /v1/vehicles/{vehicle}/nmea</c>.</summary>
public static class NmeaEndpoints
{
    /// <summary>Maps the NMEA endpoint.</summary>
    public static IEndpointRouteBuilder MapNmeaEndpoints(this IEndpointRouteBuilder app)
    {
        app.MapPost("/v1/vehicles/{vehicle}/nmea", PostNmea)
            .WithRequestExample("nmea-request.txt", "text/plain")
            .WithResponseExample(200, "nmea-response.json")
            .WithTags("Telemetry")
            .RequireApiKey(ApiKeyRole.Ingest)
            .WithName("PostNmea")
            .WithSummary("Send NMEA 0183 sentences of one vehicle")
            .WithDescription(
                "Body (text/plain): one NMEA 0183 sentence per line, CR LF or LF. Every sentence's checksum (XOR of the characters "
                + "between '$' and '*', two hex digits) is verified. Talker ids GP, GN, GL and GA are accepted, others rejected. "
                + "GGA gives the fix (position; HDOP x the configured UERE as accuracy, as for the JSON field hdop); fix quality 0, 6, 7 and 8 "
                + "are ignored with the reason. GGA has no date: it takes the date, speed (knots x 1852/3600 = m/s) and course of the RMC "
                + "of the same epoch in the body, else the date of the nearest RMC before it, else it is rejected. RMC status V is ignored; "
                + "an RMC speed or course that is not valid (or a speed above 150 m/s) is left out and listed in the RMC line's "
                + "dropped_fields while the fix is stored; a course of 360 is read as 0; "
                + "an RMC without the GGA of its epoch is rejected (it states no accuracy). Other sentences are ignored. "
                + "Each fix becomes the same message POST /v1/telemetry would make of kind gnss (without id, so an identical resend is a "
                + "duplicate) and goes through the same durable commit: a 2xx means every accepted line is stored. 200 lists "
                + "accepted / duplicate / rejected / ignored per line with field and reason; 400 when nothing could be stored and some line "
                + "was rejected; 413 over the body or line limit; 415 when the body is not text; 429 with Retry-After when the key's or "
                + "fleet's limit of requests or messages is spent (every sentence line counts as a message); 503 with Retry-After when the store is "
                + "unavailable (nothing of the request was stored). Positions derived from this data are estimates, not for "
                + "safety-critical navigation; vehicle locations are the drivers' personal data.")
            .Accepts<string>("text/plain")
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status413PayloadTooLarge)
            .ProducesProblem(StatusCodes.Status415UnsupportedMediaType)
            .ProducesProblem(StatusCodes.Status503ServiceUnavailable);
        return app;
    }

    /// <summary>Handles <c>POST /v1/vehicles/{vehicle}/nmea</c>.</summary>
    internal static async Task<Results<Ok<NmeaIngestResponse>, ProblemHttpResult>> PostNmea(
        string vehicle, HttpContext http, IngestPipeline pipeline, TenantRateLimiter rateLimiter, IOptions<IngestOptions> options)
    {
        var limits = options.Value;
        var caller = ApiCaller.Of(http);
        if (http.Request.ContentType is { } type && !type.StartsWith("text/", StringComparison.OrdinalIgnoreCase))
        {
            return Problem(StatusCodes.Status415UnsupportedMediaType, "Unsupported media type", "Content-Type: '" + type + "' is not text; send text/plain");
        }

        if (http.Request.ContentLength > limits.MaxBodyBytes)
        {
            return Problem(StatusCodes.Status413PayloadTooLarge, "Payload too large", string.Create(CultureInfo.InvariantCulture, $"body: {http.Request.ContentLength} bytes exceeds the limit of {limits.MaxBodyBytes} bytes"));
        }

        var buffer = new MemoryStream();
        var chunk = new byte[81920];
        int read;
        while ((read = await http.Request.Body.ReadAsync(chunk, http.RequestAborted).ConfigureAwait(false)) > 0)
        {
            buffer.Write(chunk, 0, read);
            if (buffer.Length > limits.MaxBodyBytes)
            {
                return Problem(StatusCodes.Status413PayloadTooLarge, "Payload too large", string.Create(CultureInfo.InvariantCulture, $"body: exceeds the limit of {limits.MaxBodyBytes} bytes"));
            }
        }

        string body = Encoding.ASCII.GetString(buffer.GetBuffer(), 0, (int)buffer.Length);
        var parsed = NmeaBodyParser.Parse(body);
        if (parsed.SentenceLines == 0)
        {
            return Problem(StatusCodes.Status400BadRequest, "No sentences", "body: contains no NMEA sentence");
        }

        if (parsed.SentenceLines > limits.MaxMessages)
        {
            return Problem(StatusCodes.Status413PayloadTooLarge, "Payload too large", string.Create(CultureInfo.InvariantCulture, $"body: {parsed.SentenceLines} lines exceed the limit of {limits.MaxMessages}"));
        }

        if (await rateLimiter.TryMessagesAsync(caller, parsed.SentenceLines).ConfigureAwait(false) is { } refused)
        {
            return refused.ToResult(http);
        }

        var results = new List<NmeaLineResult>(parsed.Lines);
        if (parsed.Fixes.Count > 0)
        {
            using var document = JsonDocument.Parse(new JsonArray([.. parsed.Fixes.Select(f => (JsonNode)ToMessage(vehicle, f))]).ToJsonString());
            var messages = document.RootElement.EnumerateArray().Select(e => (e, (string?)null)).ToList();
            IngestResponse response;
            try
            {
                response = await pipeline.IngestAsync(caller.FleetId, messages, http.RequestAborted).ConfigureAwait(false);
            }
            catch (ServiceUnavailableException ex)
            {
                http.Response.Headers.RetryAfter = limits.RetryAfterS.ToString(CultureInfo.InvariantCulture);
                return Problem(StatusCodes.Status503ServiceUnavailable, "Service unavailable", ex.Message + "; nothing of this request was stored, retry later");
            }

            foreach (var r in response.Results)
            {
                var fix = parsed.Fixes[r.Index];
                // Speed and course come from the RMC (the fix's second line): what was dropped of them is said there.
                var dropped = fix.DroppedFields.Concat((r.DroppedFields ?? []).Select(ToNmeaField)).ToList();
                for (int i = 0; i < fix.Lines.Count; i++)
                {
                    results.Add(r.Status == "rejected"
                        ? new NmeaLineResult(fix.Lines[i], "rejected", r.Field, r.Reason)
                        : new NmeaLineResult(fix.Lines[i], r.Status, DroppedFields: i == 1 && dropped.Count > 0 ? dropped : null));
                }
            }
        }

        results.Sort((a, b) => a.Line.CompareTo(b.Line));
        int Count(string status) => results.Count(r => r.Status == status);
        var answer = new NmeaIngestResponse(Count("accepted"), Count("duplicate"), Count("rejected"), Count("ignored"), results);
        if (answer.Accepted + answer.Duplicate == 0 && answer.Rejected > 0)
        {
            var first = results.First(r => r.Status == "rejected");
            return TypedResults.Problem(
                title: "No sentence could be stored",
                detail: string.Create(CultureInfo.InvariantCulture, $"line {first.Line}: {first.Field}: {first.Reason}")
                    + (answer.Rejected > 1 ? string.Create(CultureInfo.InvariantCulture, $" (and {answer.Rejected - 1} more)") : string.Empty),
                statusCode: StatusCodes.Status400BadRequest,
                extensions: new Dictionary<string, object?> { ["results"] = results });
        }

        return TypedResults.Ok(answer);
    }

    /// <summary>The JSON telemetry message of a fix (kind gnss, accuracy from HDOP).</summary>
    internal static JsonObject ToMessage(string vehicle, NmeaFix fix)
    {
        var message = new JsonObject
        {
            ["vehicle"] = vehicle,
            ["kind"] = "gnss",
            ["time"] = UnixMicroseconds.ToDateTimeUtc(fix.TimeUs).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", CultureInfo.InvariantCulture),
            ["lat_deg"] = fix.LatDeg,
            ["lon_deg"] = fix.LonDeg,
            ["hdop"] = fix.Hdop,
        };
        if (fix.SpeedMps is double speed)
        {
            message["speed_mps"] = speed;
            if (fix.CourseDeg is double course)
            {
                message["course_deg"] = course;
            }
        }

        return message;
    }

    // The JSON message's field names as the RMC names them (the message is made of the fix by ToMessage).
    private static DroppedField ToNmeaField(DroppedField dropped) => dropped.Field switch
    {
        "speed_mps" => new DroppedField("speed", dropped.Reason),
        "course_deg" => new DroppedField("course", dropped.Reason.Replace("speed_mps", "speed", StringComparison.Ordinal)),
        _ => dropped,
    };

    private static ProblemHttpResult Problem(int status, string title, string detail) =>
        TypedResults.Problem(title: title, detail: detail, statusCode: status);
}
