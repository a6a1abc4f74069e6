// A client of several service processes that resends until every message is acknowledged, and records what it saw.
using System.Collections.Concurrent;
using System.Net;
using System.Text;
using System.Text.Json;
using FusionService.Ingest;

namespace FusionService.Tests.Infrastructure;

/// <summary>
/// Posts each vehicle's messages in batches, in order (a tracker sends its next batch once the previous one is
/// answered), <see cref="Concurrency"/> requests at once, each batch to the next process in turn. A 503 is resent after
/// its Retry-After (at most 2 s), a broken or refused connection at once to the next process, until the batch is
/// answered 200. Records every acknowledged message id (accepted or duplicate in a 200), and every answer's status.
/// </summary>
internal sealed class AcknowledgingClient(IReadOnlyList<ServiceProcess> services, string key)
{
    /// <summary>Requests in flight at most.</summary>
    public const int Concurrency = 4;

    private readonly ConcurrentDictionary<string, bool> _acknowledged = new(StringComparer.Ordinal);
    private readonly ConcurrentDictionary<int, int> _statuses = new();
    private readonly ConcurrentDictionary<string, int> _progress = new(StringComparer.Ordinal);
    private readonly List<(Func<bool> Condition, TaskCompletionSource Reached)> _waits = [];
    private readonly Lock _gate = new();
    private int _withoutRetryAfter;
    private int _connectionFailures;
    private int _total = 1;

    /// <summary>The acknowledged messages, as <c>vehicle/id</c>.</summary>
    public ICollection<string> Acknowledged => _acknowledged.Keys;

    /// <summary>How many answers had each HTTP status.</summary>
    public IReadOnlyDictionary<int, int> Statuses => _statuses;

    /// <summary>503 answers without a Retry-After header.</summary>
    public int WithoutRetryAfter => _withoutRetryAfter;

    /// <summary>Requests that got no answer (connection refused or broken).</summary>
    public int ConnectionFailures => _connectionFailures;

    /// <summary>The share of all messages acknowledged so far.</summary>
    public double Fraction => (double)_acknowledged.Count / _total;

    /// <summary>Messages of <paramref name="vehicle"/> acknowledged so far.</summary>
    public int AcknowledgedOf(string vehicle) => _progress.GetValueOrDefault(vehicle);

    /// <summary>Completes once <paramref name="condition"/> holds after an acknowledgement (at once if it holds now).</summary>
    public Task When(Func<AcknowledgingClient, bool> condition)
    {
        var reached = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
        lock (_gate)
        {
            if (condition(this))
            {
                reached.SetResult();
            }
            else
            {
                _waits.Add((() => condition(this), reached));
            }
        }

        return reached.Task;
    }

    /// <summary>Sends every message of <paramref name="drives"/> (vehicle id, drive) until each is acknowledged.</summary>
    public async Task RunAsync(IReadOnlyList<(string Vehicle, TelemetryDrive Drive)> drives, int batchSize)
    {
        _total = drives.Sum(d => d.Drive.Messages.Count);
        var clients = services.Select(s =>
        {
            var client = s.Client(key);
            client.Timeout = TimeSpan.FromSeconds(60);
            return client;
        }).ToList();
        try
        {
            await Parallel.ForEachAsync(
                Enumerable.Range(0, drives.Count),
                new ParallelOptions { MaxDegreeOfParallelism = Concurrency },
                async (v, _) =>
                {
                    var (vehicle, drive) = drives[v];
                    for (int from = 0, batch = 0; from < drive.Messages.Count; from += batchSize, batch++)
                    {
                        int to = Math.Min(from + batchSize, drive.Messages.Count);
                        await PostUntilAnsweredAsync(clients, v + batch, vehicle, drive, from, to);
                    }
                });
        }
        finally
        {
            foreach (var client in clients)
            {
                client.Dispose();
            }

            // A condition that did not hold by the end never will: its waiter learns it instead of waiting for ever.
            lock (_gate)
            {
                foreach (var wait in _waits)
                {
                    wait.Reached.TrySetException(new InvalidOperationException("the stream ended before the condition held"));
                }

                _waits.Clear();
            }
        }
    }

    /// <summary>Posts one body to the processes in turn from <paramref name="first"/> until one answers 200; returns the answer.</summary>
    public async Task<IngestResponse> PostUntilAnsweredAsync(string body, int first = 0)
    {
        var clients = services.Select(s => s.Client(key)).ToList();
        try
        {
            return await PostAsync(clients, first, body);
        }
        finally
        {
            foreach (var client in clients)
            {
                client.Dispose();
            }
        }
    }

    private async Task PostUntilAnsweredAsync(List<HttpClient> clients, int first, string vehicle, TelemetryDrive drive, int from, int to)
    {
        var result = await PostAsync(clients, first, drive.Body(from, to));
        foreach (var r in result.Results)
        {
            if (r.Status is "accepted" or "duplicate")
            {
                _acknowledged[vehicle + "/" + (string)drive.Messages[from + r.Index].Message["id"]!] = true;
            }
        }

        _progress.AddOrUpdate(vehicle, to - from, (_, n) => n + to - from);
        lock (_gate)
        {
            foreach (var wait in _waits.Where(w => w.Condition()).ToList())
            {
                wait.Reached.TrySetResult();
                _waits.Remove(wait);
            }
        }
    }

    private async Task<IngestResponse> PostAsync(List<HttpClient> clients, int first, string body)
    {
        var clock = System.Diagnostics.Stopwatch.StartNew();
        for (int attempt = 0; ; attempt++)
        {
            if (clock.Elapsed > TimeSpan.FromSeconds(120))
            {
                throw new TimeoutException("no process answered a batch 200 within 120 s");
            }

            var client = clients[(first + attempt) % clients.Count];
            HttpResponseMessage response;
            try
            {
                response = await client.PostAsync("/v1/telemetry", new StringContent(body, Encoding.UTF8, "application/json"));
            }
            catch (HttpRequestException)
            {
                // Refused (the process is down) or broken (killed mid-request; the batch may be stored: a resend is a duplicate).
                Interlocked.Increment(ref _connectionFailures);
                await Task.Delay(20);
                continue;
            }

            using (response)
            {
                _statuses.AddOrUpdate((int)response.StatusCode, 1, (_, n) => n + 1);
                if (response.StatusCode == HttpStatusCode.OK)
                {
                    return JsonSerializer.Deserialize<IngestResponse>(await response.Content.ReadAsStringAsync(), Api.Json)!;
                }

                if (response.StatusCode == HttpStatusCode.ServiceUnavailable)
                {
                    var retryAfter = response.Headers.RetryAfter?.Delta;
                    if (retryAfter is null)
                    {
                        Interlocked.Increment(ref _withoutRetryAfter);
                    }

                    await Task.Delay(retryAfter is { } wait && wait < TimeSpan.FromSeconds(2) ? wait : TimeSpan.FromSeconds(2));
                    continue;
                }

                // Anything else is a failure of the run: stop resending and let the test report it.
                throw new InvalidOperationException($"{(int)response.StatusCode} from {client.BaseAddress}: {await response.Content.ReadAsStringAsync()}");
            }
        }
    }
}
