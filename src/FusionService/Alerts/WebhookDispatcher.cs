// Sends the webhook outbox: claim due rows, POST signed, mark delivered, reschedule with back-off or dead-letter.
using System.Collections.Concurrent;
using System.Globalization;
using System.Security.Cryptography;
using System.Text;
using FusionService.Database;
using FusionService.Storage.Alerts;
using FusionService.Storage.Failures;
using Microsoft.Extensions.Options;
using Npgsql;

namespace FusionService.Alerts;

/// <summary>
/// Background service delivering <c>webhook_outbox</c> rows: claims due rows (<see cref="WebhookOutbox.ClaimDueAsync"/>,
/// <c>FOR UPDATE SKIP LOCKED</c>) as delivery slots free up (<see cref="WebhookOptions.MaxConcurrentDeliveries"/>), so no
/// delivery waits for another's receiver; POSTs each payload with the <see cref="WebhookSigner"/> headers and a timeout,
/// follows no redirect and reads at most <see cref="WebhookOptions.MaxResponseBytes"/> of the answer; marks a 2xx answer
/// delivered, reschedules anything else with <see cref="WebhookOptions.BackoffDelay"/> and dead-letters it after
/// <see cref="WebhookOptions.MaxAttempts"/>. A <see cref="WebhookCircuitBreaker"/> per subscription stops attempts to a
/// receiver that keeps failing and caps the slots one receiver can hold. It also purges old rows and encrypts secrets
/// stored before migration 0009. Rows live in PostgreSQL, so a restart loses nothing: a row claimed by a process that died
/// becomes due again when its lease runs out.
/// </summary>
public sealed class WebhookDispatcher(
    FusionDatabase database,
    IHttpClientFactory clients,
    WebhookSecretProtector secrets,
    IOptions<WebhookOptions> options,
    TimeProvider time,
    ILogger<WebhookDispatcher> logger,
    Operations.ServiceMetrics metrics) : BackgroundService
{
    /// <summary>Name of the HTTP client used for deliveries.</summary>
    public const string ClientName = "webhooks";

    private readonly SemaphoreSlim _wake = new(0, 1);
    private readonly ConcurrentDictionary<Guid, Task> _inFlight = new();
    private readonly WebhookCircuitBreaker _breaker = new(
        options.Value.BreakerFailures, TimeSpan.FromSeconds(options.Value.BreakerOpenS), options.Value.MaxInFlightPerEndpoint, time);

    private long _delivered;
    private long _failed;
    private long _deadLettered;
    private DateTimeOffset _nextPurge = DateTimeOffset.MinValue;
    private bool _secretsMigrated;

    /// <summary>Deliveries that succeeded since start.</summary>
    public long Delivered => Interlocked.Read(ref _delivered);

    /// <summary>Attempts that failed since start.</summary>
    public long Failed => Interlocked.Read(ref _failed);

    /// <summary>Deliveries dead-lettered since start.</summary>
    public long DeadLettered => Interlocked.Read(ref _deadLettered);

    /// <summary>The per-subscription circuits of this process.</summary>
    public WebhookCircuitBreaker Breaker => _breaker;

    /// <summary>Makes the dispatcher poll now (call after committing outbox rows or freeing a slot).</summary>
    public void Wake()
    {
        if (_wake.CurrentCount == 0)
        {
            try
            {
                _wake.Release();
            }
            catch (SemaphoreFullException)
            {
                // Already signalled by a concurrent caller.
            }
        }
    }

    /// <inheritdoc />
    public override void Dispose()
    {
        _wake.Dispose();
        base.Dispose();
    }

    /// <inheritdoc />
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        var o = options.Value;
        if (!o.DispatcherEnabled)
        {
            logger.LogInformation("Webhook dispatcher disabled by configuration (Webhooks:DispatcherEnabled); only purging old outbox rows");
        }

        try
        {
            while (!stoppingToken.IsCancellationRequested)
            {
                bool full = false;
                try
                {
                    if (IsStoreReady())
                    {
                        await MaintainAsync(o, stoppingToken).ConfigureAwait(false);
                        if (o.DispatcherEnabled)
                        {
                            full = await DispatchAsync(o, stoppingToken).ConfigureAwait(false);
                        }
                    }
                }
                catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
                {
                    return;
                }
                catch (Exception ex) when (TransientDatabaseError.Is(ex))
                {
                    database.NoteFailure(ex);
                    logger.LogWarning(ex, "Webhook outbox could not be read; retrying");
                }
                catch (Exception ex)
                {
                    // A defect, but one round's: an exception leaving a background service would stop the host, ingest
                    // included. Logged as an error; the next round waits the usual interval.
                    logger.LogError(ex, "Webhook round failed unexpectedly; retrying");
                }

                if (!full)
                {
                    var wait = o.DispatcherEnabled ? TimeSpan.FromMilliseconds(o.PollIntervalMs) : TimeSpan.FromSeconds(o.PurgeIntervalS);
                    await _wake.WaitAsync(wait, stoppingToken).ConfigureAwait(false);
                }
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // Stopping.
        }
        finally
        {
            await Task.WhenAll(_inFlight.Values).ConfigureAwait(false);
        }
    }

    /// <summary>Claims as many due rows as there are free slots and starts them; true when every slot was filled.</summary>
    private async Task<bool> DispatchAsync(WebhookOptions o, CancellationToken stoppingToken)
    {
        int free = o.MaxConcurrentDeliveries - _inFlight.Count;
        if (free <= 0)
        {
            return false;
        }

        int wanted = Math.Min(free, o.BatchSize);
        var outbox = new WebhookOutbox(database.DataSource);
        var due = await outbox.ClaimDueAsync(wanted, TimeSpan.FromSeconds(o.LeaseS), _breaker.Blocked(), stoppingToken).ConfigureAwait(false);
        foreach (var d in due)
        {
            if (!_breaker.TryStart(d.WebhookId))
            {
                // The subscription reached its in-flight limit within this claim: give the row back, no attempt counted.
                await outbox.ReleaseAsync(d.DeliveryId, TimeSpan.FromSeconds(1), CancellationToken.None).ConfigureAwait(false);
                continue;
            }

            var started = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
            _inFlight[d.DeliveryId] = started.Task;
            _ = RunAsync(d, o, started, stoppingToken);
        }

        return due.Count == wanted;
    }

    private async Task RunAsync(OutboxDelivery d, WebhookOptions o, TaskCompletionSource done, CancellationToken stoppingToken)
    {
        bool succeeded = false;
        try
        {
            succeeded = await DeliverAsync(d, o, stoppingToken).ConfigureAwait(false);
        }
        catch (Exception ex) when (TransientDatabaseError.Is(ex) || ex is OperationCanceledException)
        {
            // The outcome could not be recorded; the lease makes the row due again.
            logger.LogWarning(ex, "Webhook {Delivery}: outcome not recorded; the row is retried after its lease", d.DeliveryId);
        }
        finally
        {
            _breaker.Finish(d.WebhookId, succeeded);
            _inFlight.TryRemove(d.DeliveryId, out _);
            done.TrySetResult();
            Wake();
        }
    }

    private async Task<bool> DeliverAsync(OutboxDelivery d, WebhookOptions o, CancellationToken stoppingToken)
    {
        using var span = Operations.FusionTelemetry.StartWebhookDelivery(d.DeliveryId, d.WebhookId, d.Attempts + 1);
        long startedAt = System.Diagnostics.Stopwatch.GetTimestamp();
        string? error = null;
        try
        {
            string secret = secrets.Unprotect(d.ProtectedSecret);
            long unixSeconds = time.GetUtcNow().ToUnixTimeSeconds();
            using var request = new HttpRequestMessage(HttpMethod.Post, d.Url)
            {
                Content = new StringContent(d.Payload, Encoding.UTF8, "application/json"),
            };
            request.Headers.Add(WebhookSigner.IdHeader, d.DeliveryId.ToString("D"));
            request.Headers.Add(WebhookSigner.TimestampHeader, unixSeconds.ToString(CultureInfo.InvariantCulture));
            request.Headers.Add(WebhookSigner.SignatureHeader, WebhookSigner.Sign(secret, d.DeliveryId, unixSeconds, d.Payload));
            request.Headers.Add(Http.LocationCaution.HeaderName, Http.LocationCaution.Text);
            using var timeout = CancellationTokenSource.CreateLinkedTokenSource(stoppingToken);
            timeout.CancelAfter(TimeSpan.FromSeconds(o.TimeoutS));
            using var response = await clients.CreateClient(ClientName)
                .SendAsync(request, HttpCompletionOption.ResponseHeadersRead, timeout.Token).ConfigureAwait(false);
            string answer = await ReadBoundedAsync(response, o.MaxResponseBytes, timeout.Token).ConfigureAwait(false);
            int status = (int)response.StatusCode;
            if (status is >= 300 and < 400)
            {
                error = "HTTP " + status.ToString(CultureInfo.InvariantCulture) + " redirect not followed"
                    + (response.Headers.Location is { } location ? " (Location: " + location + ")" : string.Empty);
            }
            else if (!response.IsSuccessStatusCode)
            {
                error = "HTTP " + status.ToString(CultureInfo.InvariantCulture) + " " + response.ReasonPhrase
                    + (answer.Length > 0 ? ": " + answer : string.Empty);
            }
        }
        catch (OperationCanceledException) when (!stoppingToken.IsCancellationRequested)
        {
            error = "timeout after " + o.TimeoutS.ToString(CultureInfo.InvariantCulture) + " s";
        }
        catch (HttpRequestException ex)
        {
            error = ex.Message;
        }
        catch (IOException ex)
        {
            error = "connection: " + ex.Message;
        }
        catch (CryptographicException)
        {
            error = "the subscription's secret cannot be decrypted: its Data Protection key is not in this process's key ring (Webhooks:KeyRingDirectory)";
        }

        double attemptS = System.Diagnostics.Stopwatch.GetElapsedTime(startedAt).TotalSeconds;
        var outbox = new WebhookOutbox(database.DataSource);
        if (error is null)
        {
            metrics.ObserveWebhookAttempt(attemptS, delivered: true, deadLettered: false);
            await outbox.MarkDeliveredAsync(d.DeliveryId, CancellationToken.None).ConfigureAwait(false);
            Interlocked.Increment(ref _delivered);
            logger.LogDebug("Webhook {Delivery} delivered {LatencyMs} ms after the alert commit", d.DeliveryId, (time.GetUtcNow() - d.CreatedAt).TotalMilliseconds);
            return true;
        }

        Interlocked.Increment(ref _failed);
        int attempt = d.Attempts + 1;
        span?.SetStatus(System.Diagnostics.ActivityStatusCode.Error, error);
        metrics.ObserveWebhookAttempt(attemptS, delivered: false, deadLettered: attempt >= o.MaxAttempts);
        if (attempt >= o.MaxAttempts)
        {
            await outbox.DeadLetterAsync(d.DeliveryId, error, CancellationToken.None).ConfigureAwait(false);
            Interlocked.Increment(ref _deadLettered);
            logger.LogWarning("Webhook {Delivery} dead-lettered after {Attempts} attempts ({Error})", d.DeliveryId, attempt, error);
            return false;
        }

        var delay = o.BackoffDelay(attempt, Random.Shared.NextDouble());
        await outbox.RescheduleAsync(d.DeliveryId, delay, error, CancellationToken.None).ConfigureAwait(false);
        logger.LogInformation("Webhook {Delivery} attempt {Attempt} failed ({Error}); next in {DelayS:0.0} s", d.DeliveryId, attempt, error, delay.TotalSeconds);
        return false;
    }

    /// <summary>At most <paramref name="maxBytes"/> of the answer body as text; the rest is never read.</summary>
    private static async Task<string> ReadBoundedAsync(HttpResponseMessage response, int maxBytes, CancellationToken cancellationToken)
    {
        if (maxBytes <= 0)
        {
            return string.Empty;
        }

        var buffer = new byte[maxBytes];
        int filled = 0;
        var stream = await response.Content.ReadAsStreamAsync(cancellationToken).ConfigureAwait(false);
        await using (stream.ConfigureAwait(false))
        {
            while (filled < buffer.Length)
            {
                int n = await stream.ReadAsync(buffer.AsMemory(filled), cancellationToken).ConfigureAwait(false);
                if (n == 0)
                {
                    break;
                }

                filled += n;
            }
        }

        return Encoding.UTF8.GetString(buffer, 0, filled).ReplaceLineEndings(" ").Trim();
    }

    /// <summary>Encrypts secrets stored in plain text before migration 0009 (once) and purges old rows (every PurgeIntervalS).</summary>
    private async Task MaintainAsync(WebhookOptions o, CancellationToken stoppingToken)
    {
        if (!_secretsMigrated)
        {
            var repository = new WebhookRepository(database.DataSource);
            var plain = await repository.ListPlaintextSecretsAsync(stoppingToken).ConfigureAwait(false);
            foreach (var (webhookId, secret) in plain)
            {
                await repository.ReplacePlaintextSecretAsync(webhookId, secrets.Protect(secret), stoppingToken).ConfigureAwait(false);
            }

            if (plain.Count > 0)
            {
                logger.LogInformation("Encrypted {Count} webhook secrets stored in plain text before migration 0009", plain.Count);
            }

            _secretsMigrated = true;
        }

        var now = time.GetUtcNow();
        if (now < _nextPurge)
        {
            return;
        }

        _nextPurge = now.AddSeconds(o.PurgeIntervalS);
        int purged = await new WebhookOutbox(database.DataSource)
            .PurgeAsync(now.AddHours(-o.DeliveredKeepHours), now.AddDays(-database.Options.RetentionDays), stoppingToken).ConfigureAwait(false);
        if (purged > 0)
        {
            logger.LogInformation("Purged {Count} webhook outbox rows (delivered over {Hours} h ago, or older than the {Days}-day retention)", purged, o.DeliveredKeepHours, database.Options.RetentionDays);
        }
    }

    private bool IsStoreReady()
    {
        try
        {
            _ = database.DataSource;
            return true;
        }
        catch (InvalidOperationException)
        {
            return false;
        }
    }
}
