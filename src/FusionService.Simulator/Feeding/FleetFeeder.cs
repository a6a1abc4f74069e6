// Feeds a running service with the demo fleet's uploads at an acceleration factor.
using System.Buffers;
using System.Net;
using System.Net.Http.Headers;
using System.Net.WebSockets;
using System.Text.Json;
using FusionService.Simulator.Fleet;
using FusionService.Simulator.Messages;

namespace FusionService.Simulator.Feeding;

/// <summary>
/// Sends each van's batches to a running service at their scaled arrival times: a batch arriving t scenario seconds after
/// the fleet's first upload is sent t / <see cref="FleetFeederOptions.AccelerationFactor"/> wall-clock seconds after the
/// start, or as soon as the van's previous batch is done, whichever is later (a van's batches never overtake each other).
/// HTTP: POST <c>{base}/v1/telemetry</c>, <c>Authorization: Bearer {key}</c>, content type <c>application/x-ndjson</c>;
/// any 2xx acknowledges. WebSocket: one connection per van to <c>{base}/v1/telemetry/stream</c> (same header), one text
/// frame <c>{"seq": n, "messages": [...]}</c> per batch (n counts from 1 per connection), and the next batch only after a
/// frame whose JSON <c>seq</c> equals n (its other content is not interpreted).
/// </summary>
/// <remarks>
/// Retries: 503 and 429 wait for Retry-After (seconds or a date, capped at <see cref="FleetFeederOptions.MaxBackoff"/>),
/// or the back-off when absent; other 5xx and network errors wait the back-off (doubling from
/// <see cref="FleetFeederOptions.InitialBackoff"/>); other statuses are failures at once. A WebSocket that closes or does
/// not acknowledge in time is reopened and the batch resent (the service sees it twice; ids are unchanged).
/// At most <see cref="FleetFeederOptions.MaxConcurrentRequests"/> batches are in flight over all vans; a batch waiting to
/// be retried keeps its slot, so a throttling service slows the whole feed down.
/// </remarks>
public sealed class FleetFeeder
{
    private readonly HttpClient _http;
    private readonly FleetFeederOptions _options;
    private readonly TimeProvider _time;
    private long _sent;
    private long _acked;
    private long _batchesAcked;
    private long _retries;
    private long _failures;
    private int _vansFinished;

    /// <summary>Creates a feeder.</summary>
    /// <param name="httpClient">Client for the HTTP transport (not disposed by the feeder).</param>
    /// <param name="options">Settings, validated here.</param>
    /// <param name="timeProvider">Clock for schedules and back-off; null for the system clock.</param>
    public FleetFeeder(HttpClient httpClient, FleetFeederOptions options, TimeProvider? timeProvider = null)
    {
        ArgumentNullException.ThrowIfNull(httpClient);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        _http = httpClient;
        _options = options;
        _time = timeProvider ?? TimeProvider.System;
    }

    /// <summary>Feeds every van of <paramref name="fleet"/>.</summary>
    /// <param name="fleet">The demo fleet.</param>
    /// <param name="progress">Receives a report every progress interval and a final one; may be null.</param>
    /// <param name="cancellationToken">Stops the feed (throws <see cref="OperationCanceledException"/>).</param>
    /// <returns>The final counters.</returns>
    public Task<FeedProgress> RunAsync(DemoFleet fleet, IProgress<FeedProgress>? progress = null, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(fleet);
        return RunAsync([.. fleet.Vans.Select(v => v.BuildBatches())], progress, cancellationToken);
    }

    /// <summary>Feeds the given batches: one list per van, each in arrival order.</summary>
    /// <param name="vans">Per van, its batches in non-decreasing arrival time.</param>
    /// <param name="progress">Receives a report every progress interval and a final one; may be null.</param>
    /// <param name="cancellationToken">Stops the feed (throws <see cref="OperationCanceledException"/>).</param>
    /// <returns>The final counters.</returns>
    public async Task<FeedProgress> RunAsync(
        IReadOnlyList<IReadOnlyList<TelemetryBatch>> vans, IProgress<FeedProgress>? progress = null, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(vans);
        long zeroUs = long.MaxValue;
        foreach (IReadOnlyList<TelemetryBatch> van in vans)
        {
            if (van.Count > 0)
            {
                zeroUs = Math.Min(zeroUs, van[0].ArrivalTimeUs);
            }
        }

        long startTicks = _time.GetTimestamp();
        using var gate = new SemaphoreSlim(_options.MaxConcurrentRequests, _options.MaxConcurrentRequests);
        using var reporting = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
        Task reporter = ReportLoopAsync(vans.Count, startTicks, progress, reporting.Token);
        try
        {
            long paceFromUs = _options.PaceFromUs ?? zeroUs;
            await Task.WhenAll(vans.Select((v, i) => FeedVanAsync(v, UsesWebSocket(i), paceFromUs, startTicks, gate, cancellationToken))).ConfigureAwait(false);
        }
        finally
        {
            await reporting.CancelAsync().ConfigureAwait(false);
            await reporter.ConfigureAwait(false);
        }

        FeedProgress final = Snapshot(vans.Count, startTicks, 0, out _);
        progress?.Report(final);
        return final;
    }

    private static TimeSpan? RetryAfter(HttpResponseMessage response, DateTimeOffset now)
    {
        RetryConditionHeaderValue? value = response.Headers.RetryAfter;
        if (value?.Delta is TimeSpan delta)
        {
            return delta;
        }

        return value?.Date is DateTimeOffset date ? (date > now ? date - now : TimeSpan.Zero) : null;
    }

    private async Task ReportLoopAsync(int vans, long startTicks, IProgress<FeedProgress>? progress, CancellationToken cancellationToken)
    {
        if (progress is null)
        {
            return;
        }

        long previousAcked = 0;
        long previousTicks = startTicks;
        while (!cancellationToken.IsCancellationRequested)
        {
            try
            {
                await Task.Delay(_options.ProgressInterval, _time, cancellationToken).ConfigureAwait(false);
            }
            catch (OperationCanceledException)
            {
                return;
            }

            FeedProgress p = Snapshot(vans, previousTicks, previousAcked, out long nowTicks);
            p = p with { Elapsed = _time.GetElapsedTime(startTicks, nowTicks) };
            previousAcked = p.MessagesAcknowledged;
            previousTicks = nowTicks;
            progress.Report(p);
        }
    }

    private FeedProgress Snapshot(int vans, long sinceTicks, long ackedBefore, out long nowTicks)
    {
        nowTicks = _time.GetTimestamp();
        long acked = Interlocked.Read(ref _acked);
        double seconds = _time.GetElapsedTime(sinceTicks, nowTicks).TotalSeconds;
        return new FeedProgress(
            _time.GetElapsedTime(sinceTicks, nowTicks),
            vans,
            Volatile.Read(ref _vansFinished),
            Interlocked.Read(ref _sent),
            acked,
            Interlocked.Read(ref _batchesAcked),
            Interlocked.Read(ref _retries),
            Interlocked.Read(ref _failures),
            seconds > 0 ? (acked - ackedBefore) / seconds : 0.0);
    }

    private bool UsesWebSocket(int vanPosition) =>
        _options.Transport == FeedTransport.WebSocket || (_options.Transport == FeedTransport.Mixed && vanPosition % 2 == 1);

    private async Task FeedVanAsync(
        IReadOnlyList<TelemetryBatch> batches, bool webSocket, long paceFromUs, long startTicks, SemaphoreSlim gate, CancellationToken cancellationToken)
    {
        VanSocket? socket = webSocket ? new VanSocket(this) : null;
        try
        {
            foreach (TelemetryBatch batch in batches)
            {
                if (!double.IsPositiveInfinity(_options.AccelerationFactor))
                {
                    TimeSpan due = TimeSpan.FromSeconds((batch.ArrivalTimeUs - paceFromUs) / 1e6 / _options.AccelerationFactor);
                    TimeSpan wait = due - _time.GetElapsedTime(startTicks);
                    if (wait > TimeSpan.Zero)
                    {
                        await Task.Delay(wait, _time, cancellationToken).ConfigureAwait(false);
                    }
                }

                await gate.WaitAsync(cancellationToken).ConfigureAwait(false);
                try
                {
                    await SendWithRetriesAsync(batch, socket, cancellationToken).ConfigureAwait(false);
                }
                finally
                {
                    gate.Release();
                }
            }
        }
        finally
        {
            if (socket is not null)
            {
                await socket.DisposeAsync().ConfigureAwait(false);
            }

            Interlocked.Increment(ref _vansFinished);
        }
    }

    private async Task SendWithRetriesAsync(TelemetryBatch batch, VanSocket? socket, CancellationToken cancellationToken)
    {
        TimeSpan backoff = _options.InitialBackoff;
        for (int attempt = 1; ; attempt++)
        {
            if (attempt > 1)
            {
                Interlocked.Increment(ref _retries);
            }

            Interlocked.Add(ref _sent, batch.Messages.Count);
            (bool ok, bool retryable, TimeSpan? retryAfter) = socket is null
                ? await PostAsync(batch, cancellationToken).ConfigureAwait(false)
                : await socket.SendAsync(batch, cancellationToken).ConfigureAwait(false);
            if (ok)
            {
                Interlocked.Add(ref _acked, batch.Messages.Count);
                Interlocked.Increment(ref _batchesAcked);
                return;
            }

            if (!retryable || attempt >= _options.MaxAttempts)
            {
                Interlocked.Increment(ref _failures);
                return;
            }

            TimeSpan wait = retryAfter ?? backoff;
            wait = wait > _options.MaxBackoff ? _options.MaxBackoff : wait;
            backoff = TimeSpan.FromTicks(Math.Min(backoff.Ticks * 2, _options.MaxBackoff.Ticks));
            if (wait > TimeSpan.Zero)
            {
                await Task.Delay(wait, _time, cancellationToken).ConfigureAwait(false);
            }
        }
    }

    private async Task<(bool Ok, bool Retryable, TimeSpan? RetryAfter)> PostAsync(TelemetryBatch batch, CancellationToken cancellationToken)
    {
        using var request = new HttpRequestMessage(HttpMethod.Post, Endpoint("v1/telemetry"));
        request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", _options.ApiKey);
        request.Content = new ByteArrayContent(TelemetryJson.ToNdjson(batch.Messages));
        request.Content.Headers.ContentType = new MediaTypeHeaderValue(TelemetryJson.NdjsonContentType);
        HttpResponseMessage response;
        try
        {
            response = await _http.SendAsync(request, cancellationToken).ConfigureAwait(false);
        }
        catch (HttpRequestException)
        {
            return (false, true, null);
        }
        catch (TaskCanceledException) when (!cancellationToken.IsCancellationRequested)
        {
            // The client's own timeout, not the caller's cancellation: try again.
            return (false, true, null);
        }

        using (response)
        {
            if (response.IsSuccessStatusCode)
            {
                return (true, false, null);
            }

            HttpStatusCode status = response.StatusCode;
            bool throttled = status is HttpStatusCode.ServiceUnavailable or HttpStatusCode.TooManyRequests;
            bool retryable = throttled || (int)status >= 500;
            return (false, retryable, throttled ? RetryAfter(response, _time.GetUtcNow()) : null);
        }
    }

    private Uri Endpoint(string relative)
    {
        string baseText = _options.BaseUrl.AbsoluteUri;
        return new Uri(baseText.EndsWith('/') ? baseText + relative : baseText + "/" + relative);
    }

    private Uri StreamEndpoint()
    {
        var builder = new UriBuilder(Endpoint("v1/telemetry/stream"));
        builder.Scheme = builder.Scheme == Uri.UriSchemeHttps ? "wss" : "ws";
        return builder.Uri;
    }

    // One van's WebSocket: opened on first use, reopened after an error; sequence numbers count per connection.
    private sealed class VanSocket(FleetFeeder owner) : IAsyncDisposable
    {
        private ClientWebSocket? _socket;
        private long _seq;

        public async Task<(bool Ok, bool Retryable, TimeSpan? RetryAfter)> SendAsync(TelemetryBatch batch, CancellationToken cancellationToken)
        {
            using var timeout = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
            timeout.CancelAfter(owner._options.AckTimeout);
            try
            {
                if (_socket is null || _socket.State != WebSocketState.Open)
                {
                    _socket?.Dispose();
                    _socket = new ClientWebSocket();
                    _socket.Options.SetRequestHeader("Authorization", "Bearer " + owner._options.ApiKey);
                    _seq = 0;
                    await _socket.ConnectAsync(owner.StreamEndpoint(), timeout.Token).ConfigureAwait(false);

                    // The acknowledgement gets its full timeout after the connection is up.
                    timeout.CancelAfter(owner._options.AckTimeout);
                }

                long seq = ++_seq;
                await _socket.SendAsync(Frame(seq, batch.Messages), WebSocketMessageType.Text, true, timeout.Token).ConfigureAwait(false);
                while (true)
                {
                    using JsonDocument? ack = await ReceiveJsonAsync(_socket, timeout.Token).ConfigureAwait(false);
                    if (ack is null)
                    {
                        return await DropAsync().ConfigureAwait(false);
                    }

                    if (ack.RootElement.ValueKind == JsonValueKind.Object && ack.RootElement.TryGetProperty("seq", out JsonElement s)
                        && s.ValueKind == JsonValueKind.Number && s.TryGetInt64(out long acked) && acked == seq)
                    {
                        return (true, false, null);
                    }
                }
            }
            catch (OperationCanceledException) when (!cancellationToken.IsCancellationRequested)
            {
                // No acknowledgement in time: reconnect and send the batch again.
                return await DropAsync().ConfigureAwait(false);
            }
            catch (WebSocketException)
            {
                return await DropAsync().ConfigureAwait(false);
            }
            catch (JsonException)
            {
                return await DropAsync().ConfigureAwait(false);
            }
        }

        public async ValueTask DisposeAsync()
        {
            if (_socket is { State: WebSocketState.Open })
            {
                try
                {
                    using var timeout = new CancellationTokenSource(TimeSpan.FromSeconds(5));
                    await _socket.CloseAsync(WebSocketCloseStatus.NormalClosure, "done", timeout.Token).ConfigureAwait(false);
                }
                catch (WebSocketException)
                {
                    // The server went away first: nothing left to close.
                }
                catch (OperationCanceledException)
                {
                    // The server did not answer the close in time; the socket is disposed below.
                }
            }

            _socket?.Dispose();
            _socket = null;
        }

        private static ReadOnlyMemory<byte> Frame(long seq, IReadOnlyList<TelemetryMessage> messages)
        {
            var buffer = new ArrayBufferWriter<byte>(256 * (messages.Count + 1));
            using (var writer = new Utf8JsonWriter(buffer))
            {
                writer.WriteStartObject();
                writer.WriteNumber("seq", seq);
                writer.WriteStartArray("messages");
                foreach (TelemetryMessage m in messages)
                {
                    TelemetryJson.Write(writer, m);
                }

                writer.WriteEndArray();
                writer.WriteEndObject();
            }

            return buffer.WrittenMemory;
        }

        private static async Task<JsonDocument?> ReceiveJsonAsync(ClientWebSocket socket, CancellationToken cancellationToken)
        {
            var buffer = new ArrayBufferWriter<byte>(1024);
            while (true)
            {
                Memory<byte> chunk = buffer.GetMemory(4096);
                ValueWebSocketReceiveResult result = await socket.ReceiveAsync(chunk, cancellationToken).ConfigureAwait(false);
                if (result.MessageType == WebSocketMessageType.Close)
                {
                    return null;
                }

                buffer.Advance(result.Count);
                if (result.EndOfMessage)
                {
                    return JsonDocument.Parse(buffer.WrittenMemory);
                }
            }
        }

        private async Task<(bool Ok, bool Retryable, TimeSpan? RetryAfter)> DropAsync()
        {
            await DisposeAsync().ConfigureAwait(false);
            return (false, true, null);
        }
    }
}
