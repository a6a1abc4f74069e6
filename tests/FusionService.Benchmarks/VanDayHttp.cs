// The vehicle-day history endpoints of a running service, timed over HTTP.
using System.Diagnostics;
using System.Globalization;
using System.Net.Http.Headers;
using FusionService.Estimation.Measurements;
using FusionService.Simulator.Messages;

namespace FusionService.Benchmarks;

/// <summary>
/// Posts the invented van day of <see cref="VanDayScenario"/> (times shifted so that it ends 10 minutes ago) to a running
/// service as NDJSON batches of 5,000 messages, waits until the vehicle's state has caught up with the last fix, and
/// then times each history request <c>repeats</c> times with a stopwatch: time to the response headers and to the last
/// byte of the body (<c>vanday-http --url URL --ingest-key KEY --read-key KEY [--metrics-key ADMIN_KEY_OR_TOKEN]
/// [--repeats 3] [--pid SERVICE_PID] [--batch 5000] [--companions 0]</c>; companions: other vans with the same day posted
/// between the van's batches; metrics-key: what reads <c>/metrics</c>, an admin key or the scrape token).
/// With <c>--pid</c> it also prints the service's resident and peak resident memory (Linux /proc) before and after.
/// A load tool, not a test: it asserts nothing.
/// </summary>
internal static class VanDayHttp
{
    public static async Task RunAsync(string[] args)
    {
        var options = Options(args);
        var baseUrl = new Uri(options["url"]);
        string vehicle = options.GetValueOrDefault("vehicle", "van-day-" + DateTime.UtcNow.ToString("HHmmss", CultureInfo.InvariantCulture));
        int repeats = int.Parse(options.GetValueOrDefault("repeats", "3"), CultureInfo.InvariantCulture);
        int? pid = options.TryGetValue("pid", out var p) ? int.Parse(p, CultureInfo.InvariantCulture) : null;
        using var http = new HttpClient { BaseAddress = baseUrl, Timeout = TimeSpan.FromMinutes(10) };

        var day = VanDayScenario.Instance.Measurements;
        long shiftUs = (DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000) - 600_000_000 - day[^1].TimeUs;
        int batch = int.Parse(options.GetValueOrDefault("batch", "5000"), CultureInfo.InvariantCulture);
        int companions = int.Parse(options.GetValueOrDefault("companions", "0"), CultureInfo.InvariantCulture);
        var shifted = day.Select(m => Measurement.FromStored(m.TimeUs + shiftUs, m.OrderKey, m.Value0, m.Value1, m.Value2)).ToArray();
        var messages = TelemetryMessages.FromMeasurements(vehicle, shifted);

        // Companion vans (the same invented day under other ids) are posted batch by batch between the van's own, so that
        // its rows share the day's partition and its pages with theirs, as in a fleet.
        var fleet = new List<IReadOnlyList<TelemetryMessage>> { messages };
        for (int c = 1; c <= companions; c++)
        {
            fleet.Add(TelemetryMessages.FromMeasurements(vehicle + "-c" + c.ToString(CultureInfo.InvariantCulture), shifted));
        }

        long fromUs = day[0].TimeUs + shiftUs, toUs = day[^1].TimeUs + shiftUs + 1;
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"posting {messages.Count:N0} messages ({day.Length:N0} measurements, {(toUs - fromUs) / 3.6e9:F2} h) for {vehicle} in batches of {batch:N0}, with {companions} companion vans"));
        var post = Stopwatch.StartNew();
        for (int i = 0; i < messages.Count; i += batch)
        {
            foreach (var van in fleet)
            {
                using var content = new ByteArrayContent(TelemetryJson.ToNdjson(van.Skip(i).Take(batch)));
                content.Headers.ContentType = new MediaTypeHeaderValue(TelemetryJson.NdjsonContentType);
                using var request = new HttpRequestMessage(HttpMethod.Post, "v1/telemetry") { Content = content };
                request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", options["ingest-key"]);
                using var response = await http.SendAsync(request);
                response.EnsureSuccessStatusCode();
            }
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"posted in {post.Elapsed.TotalSeconds:F1} s; waiting for the track to catch up"));
        await WaitForTracksAsync(http, options.GetValueOrDefault("metrics-key"));
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"tracks idle {post.Elapsed.TotalSeconds:F1} s after the first post"));
        http.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", options["read-key"]);
        PrintMemory(pid, "before the history requests");

        string window = string.Create(CultureInfo.InvariantCulture, $"from={Format(fromUs)}&to={Format(toUs)}");
        string[] requests =
        [
            $"v1/vehicles/{vehicle}/track?{window}&kind=smoothed",
            $"v1/vehicles/{vehicle}/track?{window}&kind=smoothed&format=gpx",
            $"v1/vehicles/{vehicle}/track?{window}&kind=filtered",
            $"v1/vehicles/{vehicle}/track?{window}&kind=raw",
            $"v1/vehicles/{vehicle}/distance?{window}",
        ];
        Console.WriteLine("| request | repeat | headers (ms) | total (ms) | body (bytes) |");
        Console.WriteLine("|---|---:|---:|---:|---:|");
        foreach (string path in requests)
        {
            for (int r = 1; r <= repeats; r++)
            {
                var clock = Stopwatch.StartNew();
                using var response = await http.GetAsync(path, HttpCompletionOption.ResponseHeadersRead);
                double headersMs = clock.Elapsed.TotalMilliseconds;
                await using var body = await response.Content.ReadAsStreamAsync();
                long bytes = 0;
                var buffer = new byte[81920];
                int read;
                while ((read = await body.ReadAsync(buffer)) > 0)
                {
                    bytes += read;
                }

                double totalMs = clock.Elapsed.TotalMilliseconds;
                string shown = path.Replace(window, "whole day", StringComparison.Ordinal).Replace(vehicle, "{vehicle}", StringComparison.Ordinal);
                Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                    $"| `{shown}` ({(int)response.StatusCode}) | {r} | {headersMs:F0} | {totalMs:F0} | {bytes:N0} |"));
            }
        }

        PrintMemory(pid, "after the history requests");
    }

    // Until /metrics shows no batch in the tracks and no row waiting for the tracks' writer, twice in a row.
    internal static async Task WaitForTracksAsync(HttpClient http, string? metricsKey)
    {
        int idle = 0;
        while (idle < 2)
        {
            await Task.Delay(500);
            using var request = new HttpRequestMessage(HttpMethod.Get, "metrics");
            if (metricsKey is not null)
            {
                request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", metricsKey);
            }

            using var response = await http.SendAsync(request);
            response.EnsureSuccessStatusCode();
            string text = await response.Content.ReadAsStringAsync();
            // The OpenTelemetry exporter writes labels of its own: fusion_track_batches_in_flight{otel_scope_name="..."} 0
            bool quiet = text.Split('\n').Count(l => (l.StartsWith("fusion_track_batches_in_flight", StringComparison.Ordinal)
                || l.StartsWith("fusion_track_write_queue_rows", StringComparison.Ordinal)) && l.EndsWith(" 0", StringComparison.Ordinal)) == 2;
            idle = quiet ? idle + 1 : 0;
        }
    }

    internal static string Format(long timeUs) => Uri.EscapeDataString(TelemetryJson.FormatTime(timeUs));

    private static void PrintMemory(int? pid, string when)
    {
        if (pid is not { } id)
        {
            return;
        }

        var lines = File.ReadAllLines($"/proc/{id}/status").Where(l => l.StartsWith("VmRSS", StringComparison.Ordinal) || l.StartsWith("VmHWM", StringComparison.Ordinal));
        Console.WriteLine($"service memory {when}: " + string.Join(", ", lines.Select(l => string.Join(' ', l.Split((char[]?)null, StringSplitOptions.RemoveEmptyEntries)))));
    }

    internal static Dictionary<string, string> Options(string[] args)
    {
        var values = new Dictionary<string, string>(StringComparer.Ordinal);
        for (int i = 1; i + 1 < args.Length; i += 2)
        {
            if (!args[i].StartsWith("--", StringComparison.Ordinal))
            {
                throw new ArgumentException($"expected --name value, found '{args[i]}'");
            }

            values[args[i][2..]] = args[i + 1];
        }

        foreach (string required in new[] { "url", "ingest-key", "read-key" })
        {
            if (!values.ContainsKey(required))
            {
                throw new ArgumentException($"--{required} is required: vanday-http --url URL --ingest-key KEY --read-key KEY [--metrics-key KEY] [--repeats 3] [--pid PID]");
            }
        }

        return values;
    }
}
