// Sends the webhook outbox: claim due rows, POST signed, mark delivered or reschedule with back-off.
using System.Globalization;
using System.Text;
using FusionService.Database;
using FusionService.Storage.Alerts;
using Microsoft.Extensions.Options;
using Npgsql;

namespace FusionService.Alerts;

/// <summary>
/// Background service delivering <c>webhook_outbox</c> rows: claims due rows (<see cref="WebhookOutbox.ClaimDueAsync"/>,
/// <c>FOR UPDATE SKIP LOCKED</c>), POSTs each payload with the <see cref="WebhookSigner"/> headers and a timeout, marks a
/// 2xx answer delivered and reschedules anything else with <see cref="WebhookOptions.BackoffDelay"/>, recording the
/// attempt count and the error. It polls every <see cref="WebhookOptions.PollIntervalMs"/> and at once when
/// <see cref="Wake"/> is called after an alert commit. Rows live in PostgreSQL, so a restart loses nothing: a row
/// claimed by a process that died becomes due again when its lease runs out.
/// </summary>
public sealed class WebhookDispatcher(
    FusionDatabase database, IHttpClientFactory clients, IOptions<WebhookOptions> options, TimeProvider time, ILogger<WebhookDispatcher> logger) : BackgroundService
{
    /// <summary>Name of the HTTP client used for deliveries.</summary>
    public const string ClientName = "webhooks";

    private readonly SemaphoreSlim _wake = new(0, 1);

    /// <summary>Deliveries that succeeded since start.</summary>
    public long Delivered => Interlocked.Read(ref _delivered);

    /// <summary>Attempts that failed since start.</summary>
    public long Failed => Interlocked.Read(ref _failed);

    private long _delivered;
    private long _failed;

    /// <summary>Makes the dispatcher poll now (call after committing outbox rows).</summary>
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
            logger.LogInformation("Webhook dispatcher disabled by configuration (Webhooks:DispatcherEnabled)");
            return;
        }

        while (!stoppingToken.IsCancellationRequested)
        {
            int sent = 0;
            try
            {
                if (IsStoreReady())
                {
                    var due = await new WebhookOutbox(database.DataSource).ClaimDueAsync(o.BatchSize, TimeSpan.FromSeconds(o.LeaseS), stoppingToken).ConfigureAwait(false);
                    sent = due.Count;
                    await Task.WhenAll(due.Select(d => DeliverAsync(d, o, stoppingToken))).ConfigureAwait(false);
                }
            }
            catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
            {
                return;
            }
            catch (Exception ex) when (ex is NpgsqlException or InvalidOperationException or TimeoutException)
            {
                database.NoteFailure(ex);
                logger.LogWarning(ex, "Webhook outbox could not be read; retrying");
            }

            if (sent < o.BatchSize)
            {
                try
                {
                    await _wake.WaitAsync(TimeSpan.FromMilliseconds(o.PollIntervalMs), stoppingToken).ConfigureAwait(false);
                }
                catch (OperationCanceledException)
                {
                    return;
                }
            }
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

    private async Task DeliverAsync(OutboxDelivery d, WebhookOptions o, CancellationToken stoppingToken)
    {
        string? error = null;
        try
        {
            long unixSeconds = time.GetUtcNow().ToUnixTimeSeconds();
            using var request = new HttpRequestMessage(HttpMethod.Post, d.Url)
            {
                Content = new StringContent(d.Payload, Encoding.UTF8, "application/json"),
            };
            request.Headers.Add(WebhookSigner.IdHeader, d.DeliveryId.ToString("D"));
            request.Headers.Add(WebhookSigner.TimestampHeader, unixSeconds.ToString(CultureInfo.InvariantCulture));
            request.Headers.Add(WebhookSigner.SignatureHeader, WebhookSigner.Sign(d.Secret, unixSeconds, d.Payload));
            using var timeout = CancellationTokenSource.CreateLinkedTokenSource(stoppingToken);
            timeout.CancelAfter(TimeSpan.FromSeconds(o.TimeoutS));
            using var response = await clients.CreateClient(ClientName).SendAsync(request, timeout.Token).ConfigureAwait(false);
            if (!response.IsSuccessStatusCode)
            {
                error = "HTTP " + ((int)response.StatusCode).ToString(CultureInfo.InvariantCulture) + " " + response.ReasonPhrase;
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

        var outbox = new WebhookOutbox(database.DataSource);
        if (error is null)
        {
            await outbox.MarkDeliveredAsync(d.DeliveryId, CancellationToken.None).ConfigureAwait(false);
            Interlocked.Increment(ref _delivered);
            logger.LogDebug("Webhook {Delivery} delivered {LatencyMs} ms after the alert commit", d.DeliveryId, (time.GetUtcNow() - d.CreatedAt).TotalMilliseconds);
        }
        else
        {
            var delay = o.BackoffDelay(d.Attempts + 1, Random.Shared.NextDouble());
            await outbox.RescheduleAsync(d.DeliveryId, delay, error, CancellationToken.None).ConfigureAwait(false);
            Interlocked.Increment(ref _failed);
            logger.LogInformation("Webhook {Delivery} attempt {Attempt} failed ({Error}); next in {DelayS:0.0} s", d.DeliveryId, d.Attempts + 1, error, delay.TotalSeconds);
        }
    }
}
