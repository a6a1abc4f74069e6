// HTTP and WebSocket telemetry ingest.
using System.Globalization;
using System.Net.WebSockets;
using System.Text.Json;
using FusionService.Security;
using FusionService.Storage.Fleets;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.Options;

namespace FusionService.Ingest;

/// <summary>Maps <c>POST /v1/telemetry</c> and the WebSocket <c>/v1/telemetry/stream</c>.</summary>
public static class TelemetryEndpoints
{
    /// <summary>Media type of newline-delimited JSON bodies.</summary>
    public const string NdjsonMediaType = "application/x-ndjson";

    private const string Caution =
        " Positions derived from this data are estimates, not for safety-critical navigation or collision avoidance;"
        + " vehicle locations of drivers are personal data.";

    /// <summary>Maps the telemetry endpoints.</summary>
    public static IEndpointRouteBuilder MapTelemetryEndpoints(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/v1/telemetry").WithTags("Telemetry");
        group.MapPost("/", PostTelemetry)
            .RequireApiKey(ApiKeyRole.Ingest)
            .WithName("PostTelemetry")
            .WithSummary("Send telemetry messages")
            .WithDescription(
                "Body: a JSON array of messages (application/json) or one message per line (application/x-ndjson). "
                + "Message fields: vehicle, kind (gnss | wheel | imu), time (RFC 3339 string or Unix milliseconds), optional id; "
                + "gnss: lat_deg, lon_deg, accuracy_m with accuracy_kind (one_sigma (default) | cep50 | r68 | r95 | drms) or hdop "
                + "(multiplied by the configured UERE), optional speed_mps, course_deg (clockwise from north), speed_accuracy_mps; "
                + "wheel: speed_mps; imu: yaw_rate_dps (positive = left turn), optional accel_mps2. "
                + string.Create(CultureInfo.InvariantCulture,
                    $"Plausibility bounds: accuracy_m within [{TelemetryMessageParser.MinAccuracyM:0.##}, {TelemetryMessageParser.MaxAccuracyM:0}] m, "
                    + $"hdop within [{TelemetryMessageParser.MinHdop:0.##}, {TelemetryMessageParser.MaxHdop:0.##}], "
                    + $"speed_mps (gnss) within [0, {TelemetryMessageParser.MaxGnssSpeedMps:0}] m/s, speed_accuracy_mps within "
                    + $"[{TelemetryMessageParser.MinSpeedAccuracyMps:0.##}, {TelemetryMessageParser.MaxSpeedAccuracyMps:0}] m/s; course_deg within [0, 360], 360 read as 0. ")
                + "Each message is judged on its own: 200 lists accepted / duplicate / rejected (field and reason) per message. "
                + "A bad required field (or an accuracy_m beyond its bound) rejects the message; a bad optional field is left out "
                + "and listed in the message's dropped_fields (field and reason) while the rest is stored: a bad course_deg keeps "
                + "the position and the speed, a bad speed_mps or speed_accuracy_mps keeps the position without the velocity; "
                + "a bad accel_mps2 keeps the yaw rate. "
                + "A 2xx means every accepted message is committed in PostgreSQL. A message with the same vehicle, kind, time and id "
                + "(or, without id, the same content) as a stored one is a duplicate and changes nothing. "
                + "400 when the body is not valid JSON or no message is valid (problem details list every error); "
                + "413 when the body or the message count is over the limit; 429 with Retry-After when the key's or fleet's limit "
                + "of requests or messages is spent (Security:*, see the operations guide); 503 with Retry-After when the write queue is full "
                + "or the database is unavailable (nothing was stored by this request then, so resend it)." + Caution)
            .Accepts<JsonElement>("application/json", NdjsonMediaType)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status413PayloadTooLarge)
            .ProducesProblem(StatusCodes.Status503ServiceUnavailable);
        group.MapGet("/stream", StreamTelemetry)
            .RequireApiKey(ApiKeyRole.Ingest)
            .WithName("StreamTelemetry")
            .WithSummary("Stream telemetry over a WebSocket")
            .WithDescription(
                "Open a WebSocket (HTTP/1.1 GET with Upgrade) carrying 'Authorization: Bearer <ingest key>'. Send text frames "
                + "{\"seq\": n, \"messages\": [...]} with messages as for POST /v1/telemetry. Each frame is answered, after the "
                + "durable commit, with {\"seq\": n, \"accepted\": a, \"duplicate\": d, \"rejected\": [{\"index\", \"field\", \"reason\"}], "
                + "\"dropped_fields\": [{\"index\", \"field\", \"reason\"}]} (dropped_fields: optional fields of stored messages "
                + "that were invalid and left out, as for POST /v1/telemetry); "
                + "a frame that cannot be stored is answered {\"seq\": n, \"error\": reason, \"retry_after_s\": s} and nothing of it "
                + "is stored; resend it. Every frame counts as one request and its messages as messages against the key's and fleet's "
                + "rate limits (over a limit, the frame is answered with the error and retry_after_s). When the key is revoked or "
                + "expires, the socket is closed with status 1008." + Caution)
            .ProducesProblem(StatusCodes.Status400BadRequest)
            .ProducesProblem(StatusCodes.Status401Unauthorized)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        return app;
    }

    /// <summary>Handles <c>POST /v1/telemetry</c>.</summary>
    internal static async Task<Results<Ok<IngestResponse>, ProblemHttpResult>> PostTelemetry(
        HttpContext http, IngestPipeline pipeline, TenantRateLimiter rateLimiter, IOptions<IngestOptions> options)
    {
        var limits = options.Value;
        var caller = ApiCaller.Of(http);
        if (http.Request.ContentLength > limits.MaxBodyBytes)
        {
            return TooLarge(string.Create(CultureInfo.InvariantCulture, $"body: {http.Request.ContentLength} bytes exceeds the limit of {limits.MaxBodyBytes} bytes"));
        }

        var body = await ReadLimitedAsync(http.Request.Body, http.Request.ContentLength, limits.MaxBodyBytes, http.RequestAborted).ConfigureAwait(false);
        if (body is null)
        {
            return TooLarge(string.Create(CultureInfo.InvariantCulture, $"body: exceeds the limit of {limits.MaxBodyBytes} bytes"));
        }

        bool ndjson = http.Request.ContentType is { } type
            && (type.StartsWith(NdjsonMediaType, StringComparison.OrdinalIgnoreCase) || type.StartsWith("application/ndjson", StringComparison.OrdinalIgnoreCase));
        var documents = new List<JsonDocument>();
        try
        {
            var messages = new List<(JsonElement, string?)>();
            if (ndjson)
            {
                if (SplitNdjson(body, limits.MaxMessages, documents, messages) is { } tooMany)
                {
                    return TooLarge(tooMany);
                }
            }
            else
            {
                JsonDocument document;
                try
                {
                    document = JsonDocument.Parse(body);
                }
                catch (JsonException ex)
                {
                    return BadRequest("Malformed JSON", "body: not valid JSON (" + ex.Message + ")");
                }

                documents.Add(document);
                if (document.RootElement.ValueKind != JsonValueKind.Array)
                {
                    return BadRequest("Malformed request", "body: must be a JSON array of messages (or NDJSON with Content-Type application/x-ndjson)");
                }

                foreach (var element in document.RootElement.EnumerateArray())
                {
                    messages.Add((element, null));
                }
            }

            if (messages.Count == 0)
            {
                return BadRequest("No messages", "body: contains no message");
            }

            if (messages.Count > limits.MaxMessages)
            {
                return TooLarge(string.Create(CultureInfo.InvariantCulture, $"body: {messages.Count} messages exceed the limit of {limits.MaxMessages}"));
            }

            if (await rateLimiter.TryMessagesAsync(caller, messages.Count).ConfigureAwait(false) is { } refused)
            {
                return refused.ToResult(http);
            }

            IngestResponse response;
            try
            {
                response = await pipeline.IngestAsync(caller.FleetId, messages, http.RequestAborted).ConfigureAwait(false);
            }
            catch (ServiceUnavailableException ex)
            {
                http.Response.Headers.RetryAfter = limits.RetryAfterS.ToString(CultureInfo.InvariantCulture);
                return TypedResults.Problem(
                    title: "Service unavailable",
                    detail: ex.Message + "; nothing of this request was stored, retry later",
                    statusCode: StatusCodes.Status503ServiceUnavailable);
            }

            if (response.Rejected == response.Results.Count)
            {
                var errors = response.Results.Select(r => new Dictionary<string, object?>
                {
                    ["index"] = r.Index,
                    ["field"] = r.Field,
                    ["reason"] = r.Reason,
                }).ToList();
                var first = response.Results[0];
                string detail = string.Create(CultureInfo.InvariantCulture, $"messages[{first.Index}].{first.Field}: {first.Reason}")
                    + (errors.Count > 1 ? string.Create(CultureInfo.InvariantCulture, $" (and {errors.Count - 1} more)") : string.Empty);
                return TypedResults.Problem(
                    title: "No valid message",
                    detail: detail,
                    statusCode: StatusCodes.Status400BadRequest,
                    extensions: new Dictionary<string, object?> { ["errors"] = errors });
            }

            return TypedResults.Ok(response);
        }
        finally
        {
            foreach (var document in documents)
            {
                document.Dispose();
            }
        }
    }

    /// <summary>Handles the WebSocket <c>/v1/telemetry/stream</c>.</summary>
    internal static async Task<Results<EmptyHttpResult, ProblemHttpResult>> StreamTelemetry(
        HttpContext http, IngestPipeline pipeline, TenantRateLimiter rateLimiter, StreamKeyWatch keyWatch, IOptions<IngestOptions> options)
    {
        if (!http.WebSockets.IsWebSocketRequest)
        {
            return BadRequest("WebSocket required", "connection: this endpoint accepts WebSocket upgrades only");
        }

        var caller = ApiCaller.Of(http);
        var limits = options.Value;
        using var socket = await http.WebSockets.AcceptWebSocketAsync().ConfigureAwait(false);
        using var key = keyWatch.Watch(caller);
        using var receiving = CancellationTokenSource.CreateLinkedTokenSource(http.RequestAborted);
        using var sendGate = new SemaphoreSlim(1, 1);
        var stream = new TelemetryStream(socket, caller, pipeline, rateLimiter, limits, sendGate, key.Token);
        using var closeOnKeyLoss = key.Token.Register(() => _ = stream.CloseForLostKeyAsync(receiving));
        try
        {
            await stream.ReceiveFramesAsync(receiving.Token).ConfigureAwait(false);
        }
        catch (WebSocketException)
        {
            // The client broke the protocol (the socket sent its close frame) or the connection: nothing to answer.
        }
        catch (OperationCanceledException) when (receiving.IsCancellationRequested)
        {
            // The connection is gone, or the client did not answer the close frame sent after its key was lost.
        }
        catch (ObjectDisposedException) when (key.Token.IsCancellationRequested)
        {
            // Closed after the key was lost.
        }

        return TypedResults.Empty;
    }

    /// <summary>One telemetry WebSocket: frames in, acknowledgements out, closed with 1008 when its key is lost.</summary>
    private sealed class TelemetryStream(
        WebSocket socket, ApiCaller caller, IngestPipeline pipeline, TenantRateLimiter rateLimiter, IngestOptions limits, SemaphoreSlim sendGate, CancellationToken keyLost)
    {
        public async Task ReceiveFramesAsync(CancellationToken cancel)
        {
            var buffer = new byte[64 * 1024];
            var frame = new MemoryStream();
            while (socket.State == WebSocketState.Open)
            {
                frame.SetLength(0);
                WebSocketReceiveResult received;
                do
                {
                    received = await socket.ReceiveAsync(buffer, cancel).ConfigureAwait(false);
                    if (received.MessageType == WebSocketMessageType.Close)
                    {
                        await SendGatedAsync(s => s.State == WebSocketState.CloseReceived
                            ? s.CloseOutputAsync(WebSocketCloseStatus.NormalClosure, "bye", cancel)
                            : Task.CompletedTask).ConfigureAwait(false);
                        return;
                    }

                    frame.Write(buffer, 0, received.Count);
                    if (frame.Length > limits.MaxBodyBytes)
                    {
                        // Close at once (1009 with the limit in the reason) rather than read the rest of the frame; the
                        // connection ends when the handler returns.
                        await SendGatedAsync(s => s.State == WebSocketState.Open
                            ? s.CloseOutputAsync(
                                WebSocketCloseStatus.MessageTooBig,
                                string.Create(CultureInfo.InvariantCulture, $"frame exceeds the limit of {limits.MaxBodyBytes} bytes"),
                                cancel)
                            : Task.CompletedTask).ConfigureAwait(false);
                        return;
                    }
                }
                while (!received.EndOfMessage);

                if (keyLost.IsCancellationRequested)
                {
                    // Nothing of a revoked or expired key is stored; the close frame is on its way.
                    continue;
                }

                var ack = await AcknowledgeAsync(frame.ToArray(), caller, pipeline, rateLimiter, limits, cancel).ConfigureAwait(false);
                var bytes = JsonSerializer.SerializeToUtf8Bytes(ack);
                await SendGatedAsync(s => s.State == WebSocketState.Open
                    ? s.SendAsync(bytes, WebSocketMessageType.Text, true, cancel)
                    : Task.CompletedTask).ConfigureAwait(false);
            }
        }

        /// <summary>Sends the 1008 close frame; the receive loop gets <see cref="LiveCloseLingerS"/> seconds for the client's answer.</summary>
        public async Task CloseForLostKeyAsync(CancellationTokenSource receiving)
        {
            try
            {
                await SendGatedAsync(s => s.State == WebSocketState.Open
                    ? s.CloseOutputAsync(WebSocketCloseStatus.PolicyViolation, "API key revoked or expired", CancellationToken.None)
                    : Task.CompletedTask).ConfigureAwait(false);
                receiving.CancelAfter(TimeSpan.FromSeconds(LiveCloseLingerS));
            }
            catch (Exception ex) when (ex is WebSocketException or ObjectDisposedException or OperationCanceledException)
            {
                // The connection is gone already.
            }
        }

        private async Task SendGatedAsync(Func<WebSocket, Task> send)
        {
            await sendGate.WaitAsync(CancellationToken.None).ConfigureAwait(false);
            try
            {
                await send(socket).ConfigureAwait(false);
            }
            finally
            {
                sendGate.Release();
            }
        }
    }

    /// <summary>Seconds a client may take to answer the close frame sent after its key was lost.</summary>
    private const int LiveCloseLingerS = 5;

    private static async Task<Dictionary<string, object?>> AcknowledgeAsync(
        byte[] frame, ApiCaller caller, IngestPipeline pipeline, TenantRateLimiter rateLimiter, IngestOptions limits, CancellationToken cancellationToken)
    {
        if (await rateLimiter.TryRequestAsync(caller).ConfigureAwait(false) is { } tooManyFrames)
        {
            return new() { ["seq"] = null, ["error"] = tooManyFrames.Detail, ["retry_after_s"] = tooManyFrames.RetryAfterS };
        }

        JsonDocument document;
        try
        {
            document = JsonDocument.Parse(frame);
        }
        catch (JsonException ex)
        {
            return new() { ["seq"] = null, ["error"] = "frame: not valid JSON (" + ex.Message + ")" };
        }

        using (document)
        {
            var root = document.RootElement;
            // TryGetInt64 throws on a non-number: check the kind first, so {"seq":"x"} is answered, not the socket aborted.
            long? seq = root.ValueKind == JsonValueKind.Object && root.TryGetProperty("seq", out var s)
                && s.ValueKind == JsonValueKind.Number && s.TryGetInt64(out long n) ? n : null;
            if (seq is null)
            {
                return new() { ["seq"] = null, ["error"] = "seq: is required (an integer)" };
            }

            if (!root.TryGetProperty("messages", out var list) || list.ValueKind != JsonValueKind.Array)
            {
                return new() { ["seq"] = seq, ["error"] = "messages: is required (an array)" };
            }

            var messages = list.EnumerateArray().Select(e => (e, (string?)null)).ToList();
            if (messages.Count > limits.MaxMessages)
            {
                return new() { ["seq"] = seq, ["error"] = string.Create(CultureInfo.InvariantCulture, $"messages: {messages.Count} exceed the limit of {limits.MaxMessages}") };
            }

            if (await rateLimiter.TryMessagesAsync(caller, messages.Count).ConfigureAwait(false) is { } refused)
            {
                return new() { ["seq"] = seq, ["error"] = refused.Detail, ["retry_after_s"] = refused.RetryAfterS };
            }

            try
            {
                var response = await pipeline.IngestAsync(caller.FleetId, messages, cancellationToken).ConfigureAwait(false);
                return new()
                {
                    ["seq"] = seq,
                    ["accepted"] = response.Accepted,
                    ["duplicate"] = response.Duplicate,
                    ["rejected"] = response.Results.Where(r => r.Status == "rejected")
                        .Select(r => new Dictionary<string, object?> { ["index"] = r.Index, ["field"] = r.Field, ["reason"] = r.Reason })
                        .ToList(),
                    ["dropped_fields"] = response.Results
                        .SelectMany(r => (r.DroppedFields ?? []).Select(d => new Dictionary<string, object?> { ["index"] = r.Index, ["field"] = d.Field, ["reason"] = d.Reason }))
                        .ToList(),
                };
            }
            catch (ServiceUnavailableException ex)
            {
                return new() { ["seq"] = seq, ["error"] = ex.Message, ["retry_after_s"] = limits.RetryAfterS };
            }
        }
    }

    // Splits an NDJSON body into its messages. The non-empty lines are counted first (a byte scan, nothing allocated),
    // so a body over the message limit is refused before any line is parsed; a line that cannot start a JSON object is
    // rejected without a parse (and without an exception); only lines starting with '{' are parsed.
    private static string? SplitNdjson(byte[] body, int maxMessages, List<JsonDocument> documents, List<(JsonElement, string?)> messages)
    {
        int count = 0;
        foreach (var range in NdjsonLines(body))
        {
            if (!IsBlank(body.AsSpan(range)) && ++count > maxMessages)
            {
                return string.Create(CultureInfo.InvariantCulture, $"body: more than {maxMessages} messages (the limit)");
            }
        }

        int line = 0;
        foreach (var range in NdjsonLines(body))
        {
            line++;
            var span = body.AsSpan(range);
            if (IsBlank(span))
            {
                continue;
            }

            if (span.TrimStart(" \t\r"u8)[0] != (byte)'{')
            {
                messages.Add((default, string.Create(CultureInfo.InvariantCulture, $"line {line}: not a JSON object (each line must be one message)")));
                continue;
            }

            try
            {
                var document = JsonDocument.Parse(body.AsMemory(range));
                documents.Add(document);
                messages.Add((document.RootElement, null));
            }
            catch (JsonException ex)
            {
                messages.Add((default, string.Create(CultureInfo.InvariantCulture, $"line {line}: not valid JSON ({ex.Message})")));
            }
        }

        return null;
    }

    private static IEnumerable<Range> NdjsonLines(byte[] body)
    {
        int start = 0;
        while (start <= body.Length)
        {
            int end = Array.IndexOf(body, (byte)'\n', start);
            if (end < 0)
            {
                end = body.Length;
            }

            yield return new Range(start, end);
            start = end + 1;
        }
    }

    private static bool IsBlank(ReadOnlySpan<byte> line) => line.Trim(" \t\r"u8).IsEmpty;

    // Reads the body, at most limit bytes (null beyond). With a Content-Length the buffer is allocated once at its size
    // and returned without a copy; a chunked body grows it.
    private static async Task<byte[]?> ReadLimitedAsync(Stream body, long? contentLength, int limit, CancellationToken cancellationToken)
    {
        var buffer = new MemoryStream(contentLength is long n && n <= limit ? (int)n : 0);
        var chunk = new byte[81920];
        int read;
        while ((read = await body.ReadAsync(chunk, cancellationToken).ConfigureAwait(false)) > 0)
        {
            buffer.Write(chunk, 0, read);
            if (buffer.Length > limit)
            {
                return null;
            }
        }

        return buffer.Length == buffer.Capacity ? buffer.GetBuffer() : buffer.ToArray();
    }

    private static ProblemHttpResult BadRequest(string title, string detail) =>
        TypedResults.Problem(title: title, detail: detail, statusCode: StatusCodes.Status400BadRequest);

    private static ProblemHttpResult TooLarge(string detail) =>
        TypedResults.Problem(title: "Payload too large", detail: detail, statusCode: StatusCodes.Status413PayloadTooLarge);
}
