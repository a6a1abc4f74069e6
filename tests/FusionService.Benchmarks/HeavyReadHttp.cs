// Ingest acknowledgement latency of a running service with and without concurrent 24 h smoothed-track requests.
using System.Diagnostics;
using System.Globalization;
using System.Net.Http.Headers;
using System.Text;
using FusionService.Estimation.Measurements;
using FusionService.Simulator.Messages;

namespace FusionService.Benchmarks;

/// <summary>
/// <c>heavy-read-http --url URL --ingest-key KEY --read-key KEY --metrics-key ADMIN_KEY_OR_TOKEN [--seconds 20]
/// [--readers 5] [--posters 4] [--batch 315] [--rate 0] [--read-url URL]</c>: posts the invented van day of <see cref="VanDayScenario"/> (ending 10
/// minutes ago), waits for the tracks, then runs the same ingest load twice for <c>seconds</c> each: alone, and beside
/// <c>readers</c> clients that each ask for the van's smoothed track over its whole day (a 24 h window) again and again.
/// The ingest load is <c>posters</c> clients, each posting batches of <c>batch</c> wheel-speed messages at 10 Hz (a van's
/// 15 s upload of GNSS at 1 Hz and wheel speed and IMU at 10 Hz is 315) for 250 vans of its own in turn, one request
/// after the other (closed loop: as fast as the service answers). With <c>--rate R</c> the same vans' uploads go out
/// open loop at R requests per second in total instead (1,000 vans uploading every 15 s: 66.7), each timed from when it
/// was due.
/// Prints, per phase, acknowledgements, refusals and acknowledgement latency percentiles, and the history answers by
/// status with their latency. A load tool, not a test: it asserts nothing.
/// </summary>
internal static class HeavyReadHttp
{
    private const int VansPerPoster = 250;

    public static async Task RunAsync(string[] args)
    {
        var options = VanDayHttp.Options(args);
        var baseUrl = new Uri(options["url"]);
        int seconds = int.Parse(options.GetValueOrDefault("seconds", "20"), CultureInfo.InvariantCulture);
        int readers = int.Parse(options.GetValueOrDefault("readers", "5"), CultureInfo.InvariantCulture);
        int posters = int.Parse(options.GetValueOrDefault("posters", "4"), CultureInfo.InvariantCulture);
        int batch = int.Parse(options.GetValueOrDefault("batch", "315"), CultureInfo.InvariantCulture);
        double rate = double.Parse(options.GetValueOrDefault("rate", "0"), CultureInfo.InvariantCulture);
        string vehicle = "heavy-day-" + DateTime.UtcNow.ToString("HHmmss", CultureInfo.InvariantCulture);
        using var http = new HttpClient(new SocketsHttpHandler { MaxConnectionsPerServer = 64 }) { BaseAddress = baseUrl, Timeout = TimeSpan.FromMinutes(5) };
        // The readers may ask another process of the same store (a history-read process, docs/limits-and-keys.md).
        using var readHttp = new HttpClient(new SocketsHttpHandler { MaxConnectionsPerServer = 64 })
        {
            BaseAddress = options.TryGetValue("read-url", out string? readUrl) ? new Uri(readUrl) : baseUrl,
            Timeout = TimeSpan.FromMinutes(5),
        };

        var day = VanDayScenario.Instance.Measurements;
        long shiftUs = (DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000) - 600_000_000 - day[^1].TimeUs;
        var shifted = day.Select(m => Measurement.FromStored(m.TimeUs + shiftUs, m.OrderKey, m.Value0, m.Value1, m.Value2)).ToArray();
        var messages = TelemetryMessages.FromMeasurements(vehicle, shifted);
        var post = Stopwatch.StartNew();
        for (int i = 0; i < messages.Count; i += 5000)
        {
            using var content = new ByteArrayContent(TelemetryJson.ToNdjson(messages.Skip(i).Take(5000)));
            content.Headers.ContentType = new MediaTypeHeaderValue(TelemetryJson.NdjsonContentType);
            using var request = new HttpRequestMessage(HttpMethod.Post, "v1/telemetry") { Content = content };
            request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", options["ingest-key"]);
            using var response = await http.SendAsync(request);
            response.EnsureSuccessStatusCode();
        }

        await VanDayHttp.WaitForTracksAsync(http, options.GetValueOrDefault("metrics-key"));
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"posted the van day ({messages.Count:N0} messages) in {post.Elapsed.TotalSeconds:F1} s; tracks idle"));
        long endUs = day[^1].TimeUs + shiftUs + 1;
        string smoothed = string.Create(CultureInfo.InvariantCulture,
            $"v1/vehicles/{vehicle}/track?kind=smoothed&from={VanDayHttp.Format(endUs - 24 * 3_600_000_000L)}&to={VanDayHttp.Format(endUs)}");

        Console.WriteLine("| phase | acks | refused | ack p50 (ms) | ack p99 (ms) | ack max (ms) | history answers (status: count, median ms) |");
        Console.WriteLine("|---|---:|---:|---:|---:|---:|---|");
        var toolLines = new List<string>();
        for (int phase = 0; phase < 2; phase++)
        {
            int readerCount = phase == 0 ? 0 : readers;
            var toolCpu = Process.GetCurrentProcess().TotalProcessorTime;
            var toolPause = GC.GetTotalPauseDuration();
            int toolGen0 = GC.CollectionCount(0), toolGen1 = GC.CollectionCount(1), toolGen2 = GC.CollectionCount(2);
            var toolClock = Stopwatch.StartNew();
            using var stop = new CancellationTokenSource(TimeSpan.FromSeconds(seconds));
            var acks = Enumerable.Range(0, posters).Select(_ => new List<double>()).ToArray();
            var refused = new int[posters];
            var posting = rate > 0
                ? [PostAtRateAsync(http, options["ingest-key"], string.Create(CultureInfo.InvariantCulture, $"{vehicle}-p{phase}"), posters * VansPerPoster, batch, rate, acks, refused, stop.Token)]
                : Enumerable.Range(0, posters).Select(p => Task.Run(async () =>
                {
                    var clocks = Enumerable.Repeat(StartClockUs(), VansPerPoster).ToArray();
                    for (int n = 0; !stop.IsCancellationRequested; n++)
                    {
                        int v = n % VansPerPoster;
                        string van = string.Create(CultureInfo.InvariantCulture, $"{vehicle}-p{phase}-{p}-{v}");
                        var clock = Stopwatch.StartNew();
                        bool ok = await PostAsync(http, options["ingest-key"], WheelBatch(van, batch, ref clocks[v]));
                        if (ok)
                        {
                            acks[p].Add(clock.Elapsed.TotalMilliseconds);
                        }
                        else
                        {
                            refused[p]++;
                        }
                    }
                })).ToArray();
            var answers = new List<(int Status, double Ms)>();
            var reading = Enumerable.Range(0, readerCount).Select(_ => Task.Run(async () =>
            {
                while (!stop.IsCancellationRequested)
                {
                    using var request = new HttpRequestMessage(HttpMethod.Get, smoothed);
                    request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", options["read-key"]);
                    var clock = Stopwatch.StartNew();
                    using var response = await readHttp.SendAsync(request);
                    await response.Content.ReadAsByteArrayAsync();
                    lock (answers)
                    {
                        answers.Add(((int)response.StatusCode, clock.Elapsed.TotalMilliseconds));
                    }

                    if (!response.IsSuccessStatusCode && response.Headers.RetryAfter?.Delta is { } wait)
                    {
                        await Task.Delay(wait);
                    }
                }
            })).ToArray();
            await Task.WhenAll(posting.Concat(reading));
            var all = acks.SelectMany(a => a).Order().ToArray();
            string history = readerCount == 0 ? "-" : string.Join(", ", answers.GroupBy(a => a.Status).OrderBy(g => g.Key)
                .Select(g => string.Create(CultureInfo.InvariantCulture, $"{g.Key}: {g.Count()}, {Percentile(g.Select(a => a.Ms).Order().ToArray(), 0.5):F0} ms")));
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"| {(readerCount == 0 ? "ingest alone" : $"ingest + {readerCount} smoothed 24 h readers")} | {all.Length} | {refused.Sum()} | {Percentile(all, 0.5):F0} | {Percentile(all, 0.99):F0} | {(all.Length > 0 ? all[^1] : double.NaN):F0} | {history} |"));
            toolLines.Add(string.Create(
                CultureInfo.InvariantCulture,
                $"load tool, {(readerCount == 0 ? "ingest alone" : "beside readers")}: {(Process.GetCurrentProcess().TotalProcessorTime - toolCpu).TotalSeconds:F1} s processor in {toolClock.Elapsed.TotalSeconds:F1} s; GC gen0/1/2 {GC.CollectionCount(0) - toolGen0}/{GC.CollectionCount(1) - toolGen1}/{GC.CollectionCount(2) - toolGen2}, paused {(GC.GetTotalPauseDuration() - toolPause).TotalMilliseconds:F0} ms"));
        }

        // The tool shares the machine (and, started from the same session, the service's scheduling group): its own cost.
        toolLines.ForEach(Console.WriteLine);
    }

    // Each van's wheel clock starts 20 minutes ago, so every batch is fresh and in order.
    private static long StartClockUs() => (DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() - 20 * 60_000) * 1000;

    // One upload of a van: `batch` wheel-speed messages at 10 Hz from its clock on.
    private static string WheelBatch(string van, int batch, ref long clockUs)
    {
        var body = new StringBuilder("[");
        for (int i = 0; i < batch; i++, clockUs += 100_000)
        {
            body.Append(i == 0 ? string.Empty : ",").Append("{\"vehicle\":\"").Append(van).Append("\",\"kind\":\"wheel\",\"time\":")
                .Append((clockUs / 1000).ToString(CultureInfo.InvariantCulture)).Append(",\"speed_mps\":4}");
        }

        return body.Append(']').ToString();
    }

    private static async Task<bool> PostAsync(HttpClient http, string key, string body)
    {
        using var request = new HttpRequestMessage(HttpMethod.Post, "v1/telemetry") { Content = new StringContent(body, Encoding.UTF8, "application/json") };
        request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", key);
        using var response = await http.SendAsync(request);
        await response.Content.ReadAsByteArrayAsync();
        return response.IsSuccessStatusCode;
    }

    /// <summary>
    /// Open-loop ingest (<c>--rate</c>): request n is due at n / rate seconds after the start whatever the answers before
    /// it, for <paramref name="vans"/> vans in turn, and its latency counts from when it was due, so a service that
    /// falls behind shows it in the percentiles instead of slowing the load down (coordinated omission).
    /// </summary>
    private static async Task PostAtRateAsync(
        HttpClient http, string key, string prefix, int vans, int batch, double rate, List<double>[] acks, int[] refused, CancellationToken stop)
    {
        var clocks = Enumerable.Repeat(StartClockUs(), vans).ToArray();
        var sent = new List<Task>();
        var start = Stopwatch.StartNew();
        for (int n = 0; !stop.IsCancellationRequested; n++)
        {
            double dueMs = n * 1000.0 / rate;
            double waitMs = dueMs - start.Elapsed.TotalMilliseconds;
            if (waitMs > 0)
            {
                try
                {
                    await Task.Delay(TimeSpan.FromMilliseconds(waitMs), stop);
                }
                catch (OperationCanceledException)
                {
                    break;
                }
            }

            int v = n % vans;
            string body = WheelBatch(string.Create(CultureInfo.InvariantCulture, $"{prefix}-{v}"), batch, ref clocks[v]);
            sent.Add(Task.Run(async () =>
            {
                bool ok = await PostAsync(http, key, body);
                double ms = start.Elapsed.TotalMilliseconds - dueMs;
                lock (acks)
                {
                    if (ok)
                    {
                        acks[0].Add(ms);
                    }
                    else
                    {
                        refused[0]++;
                    }
                }
            }, CancellationToken.None)); // a request already due is answered and counted even after the phase ends
        }

        await Task.WhenAll(sent);
    }

    private static double Percentile(double[] sorted, double q) =>
        sorted.Length == 0 ? double.NaN : sorted[Math.Min(sorted.Length - 1, (int)Math.Ceiling(q * sorted.Length) - 1)];
}
