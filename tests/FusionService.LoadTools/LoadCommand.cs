// `load --url URL --key KEY [--vehicles N] [--batches B | --seconds T] [--batch-size S] [--concurrency C] [--shape S] [--rate R] ...`.
using System.Globalization;
using FusionService.Simulator.Load;
using Microsoft.Extensions.Configuration;

namespace FusionService.LoadTools;

/// <summary>
/// The <c>load</c> command: posts synthetic telemetry for many vehicles to a running service in batches and reports
/// accepted messages per second and the p50/p99 acknowledgement latency (a load tool, not a test). It then reads the
/// service's fused-state lag histogram from <c>/metrics</c> (before/after difference) and, unless
/// <c>--copy-compare no</c>, stores the same rows with plain binary COPY in a scratch schema of the same database
/// (<see cref="CopyComparison"/>) and prints both rates and their ratio.
/// </summary>
public static class LoadCommand
{
    /// <summary>Usage text.</summary>
    public const string Usage = "usage: load --url http://127.0.0.1:5080 --key INGEST_KEY [--vehicles 1000] [--batches 200 | --seconds 60] "
        + "[--batch-size 500] [--concurrency 8] [--shape per-vehicle|interleaved] [--vehicle-run 1] [--rate MESSAGES_PER_S] [--vehicle-prefix load-] [--metrics-token TOKEN] "
        + "[--copy-compare yes|no]";

    /// <summary>True when <paramref name="args"/> ask for this command.</summary>
    public static bool Matches(string[] args) => args is ["load", ..];

    /// <summary>Runs the load and prints one summary line.</summary>
    /// <returns>The process exit code: 0, or 2 for bad arguments, or 1 when any batch was refused.</returns>
    public static async Task<int> RunAsync(string[] args, IConfiguration configuration, TextWriter output, TextWriter error, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(configuration);
        ArgumentNullException.ThrowIfNull(args);
        ArgumentNullException.ThrowIfNull(output);
        ArgumentNullException.ThrowIfNull(error);
        var values = new Dictionary<string, string>(StringComparer.Ordinal);
        for (int i = 1; i < args.Length; i += 2)
        {
            if (!args[i].StartsWith("--", StringComparison.Ordinal) || i + 1 >= args.Length)
            {
                await error.WriteLineAsync($"argument '{args[i]}' needs a value. {Usage}").ConfigureAwait(false);
                return 2;
            }

            values[args[i][2..]] = args[i + 1];
        }

        if (!values.TryGetValue("url", out string? url) || !Uri.TryCreate(url, UriKind.Absolute, out Uri? baseUrl)
            || !values.TryGetValue("key", out string? key))
        {
            await error.WriteLineAsync($"--url (absolute) and --key are required. {Usage}").ConfigureAwait(false);
            return 2;
        }

        // Place the synthetic data just behind the clock so that no batch lies in the future or before the store's partitions.
        long nowUs = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000;
        LoadGeneratorOptions options;
        try
        {
            options = new LoadGeneratorOptions
            {
                Endpoint = new Uri(baseUrl, "v1/telemetry"),
                ApiKey = key,
                VehicleCount = Int(values, "vehicles", 1000),
                TotalBatches = Int(values, "batches", 200),
                BatchSize = Int(values, "batch-size", 500),
                Concurrency = Int(values, "concurrency", 8),
                StartTimeUs = nowUs - 3_600_000_000L,
                Duration = values.ContainsKey("seconds") ? TimeSpan.FromSeconds(Int(values, "seconds", 60)) : null,
                Shape = ShapeOf(values),
                VehicleRun = Int(values, "vehicle-run", 1),
                VehiclePrefix = values.GetValueOrDefault("vehicle-prefix", "load-"),
                MessagesPerSecond = values.ContainsKey("rate") ? Int(values, "rate", 0) : null,
            };
            options.Validate();
        }
        catch (Exception e) when (e is FormatException or ArgumentException)
        {
            await error.WriteLineAsync($"{e.Message} {Usage}").ConfigureAwait(false);
            return 2;
        }

        bool compareCopy = !values.TryGetValue("copy-compare", out string? compare) || compare is "yes" or "true";
        using var http = new HttpClient { Timeout = TimeSpan.FromSeconds(60) };
        values.TryGetValue("metrics-token", out string? metricsToken);
        var metricsUrl = new Uri(baseUrl, "metrics");
        string? before = await ScrapeAsync(http, metricsUrl, metricsToken, cancellationToken).ConfigureAwait(false);
        string amount = options.Duration is { } d
            ? string.Create(CultureInfo.InvariantCulture, $"for {d.TotalSeconds:F0} s")
            : string.Create(CultureInfo.InvariantCulture, $"{options.TotalBatches:N0} batches");
        await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture,
            $"posting {amount} of {options.BatchSize} messages per batch ({ShapeName(options)}) for {options.VehicleCount:N0} vehicles, {options.Concurrency} at a time{RateText(options)}, to {options.Endpoint}")).ConfigureAwait(false);
        var generator = new LoadGenerator(http, options);
        var run = generator.RunAsync(cancellationToken);
        var started = System.Diagnostics.Stopwatch.StartNew();
        while (await Task.WhenAny(run, Task.Delay(5000, cancellationToken)).ConfigureAwait(false) != run)
        {
            await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture,
                $"  {started.Elapsed.TotalSeconds,5:F0} s: {generator.MessagesAccepted:N0} messages accepted ({generator.MessagesAccepted / started.Elapsed.TotalSeconds:N0}/s), {generator.BatchesRefused:N0} batches refused")).ConfigureAwait(false);
        }

        LoadReport report = await run.ConfigureAwait(false);
        await output.WriteLineAsync(report.ToSummaryLine()).ConfigureAwait(false);

        // Wait for the tracks to finish the backlog, then read the fused-state lag the service observed during the run.
        string? after = null;
        for (int i = 0; i < 120 && before is not null; i++)
        {
            after = await ScrapeAsync(http, metricsUrl, metricsToken, cancellationToken).ConfigureAwait(false);
            if (after is null || PrometheusText.Value(after, "fusion_track_batches_in_flight") == 0)
            {
                break;
            }

            await Task.Delay(500, cancellationToken).ConfigureAwait(false);
        }

        if (before is not null && after is not null)
        {
            var lag = PrometheusText.HistogramDifference(before, after, "fusion_track_lag_seconds");
            await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture,
                $"fused-state lag (commit to processed by the track, {lag.Count:N0} batches): mean {lag.MeanS * 1000:F1} ms, p50 <= {lag.QuantileUpperBoundS(0.5) * 1000:F0} ms, p99 <= {lag.QuantileUpperBoundS(0.99) * 1000:F0} ms (histogram bucket bounds)")).ConfigureAwait(false);
        }
        else
        {
            await output.WriteLineAsync("fused-state lag: /metrics not readable (pass --metrics-token with the scrape token Operations:MetricsToken or an admin key)").ConfigureAwait(false);
        }

        if (compareCopy && report.BatchesAccepted > 0)
        {
            // A GNSS message with speed stores two rows (position and velocity), so both sides are compared in rows.
            var (rows, rowsPerSecond) = await CopyComparison.RunAsync(configuration, options, report.BatchesAccepted + report.BatchesRejected, output, cancellationToken).ConfigureAwait(false);
            double serviceRowsPerSecond = rows * ((double)report.BatchesAccepted / (report.BatchesAccepted + report.BatchesRejected)) / report.Elapsed.TotalSeconds;
            await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture,
                $"rows: service ingest {serviceRowsPerSecond:N0} rows/s ({report.AcceptedPerSecond:N0} messages/s); raw binary COPY of the same {rows:N0} rows {rowsPerSecond:N0} rows/s; the service reached {serviceRowsPerSecond / rowsPerSecond:P1} of raw COPY")).ConfigureAwait(false);
        }

        return report.BatchesRejected == 0 ? 0 : 1;
    }

    private static async Task<string?> ScrapeAsync(HttpClient http, Uri url, string? token, CancellationToken cancellationToken)
    {
        using var request = new HttpRequestMessage(HttpMethod.Get, url);
        if (!string.IsNullOrEmpty(token))
        {
            request.Headers.Authorization = new System.Net.Http.Headers.AuthenticationHeaderValue("Bearer", token);
        }

        try
        {
            using var response = await http.SendAsync(request, cancellationToken).ConfigureAwait(false);
            return response.IsSuccessStatusCode ? await response.Content.ReadAsStringAsync(cancellationToken).ConfigureAwait(false) : null;
        }
        catch (HttpRequestException)
        {
            return null;
        }
    }

    private static int Int(Dictionary<string, string> values, string name, int fallback) =>
        values.TryGetValue(name, out string? text)
            ? int.TryParse(text, NumberStyles.Integer, CultureInfo.InvariantCulture, out int value) ? value : throw new FormatException($"--{name} must be a whole number, was '{text}'.")
            : fallback;

    private static LoadShape ShapeOf(Dictionary<string, string> values) =>
        !values.TryGetValue("shape", out string? text) ? LoadShape.PerVehicle
        : text switch
        {
            "per-vehicle" => LoadShape.PerVehicle,
            "interleaved" => LoadShape.Interleaved,
            _ => throw new FormatException($"--shape must be per-vehicle or interleaved, was '{text}'."),
        };

    private static string ShapeName(LoadGeneratorOptions options) => options.Shape != LoadShape.Interleaved ? "per vehicle"
        : options.VehicleRun == 1 ? "interleaved"
        : string.Create(CultureInfo.InvariantCulture, $"interleaved, {options.VehicleRun} messages of a vehicle in a row");

    private static string RateText(LoadGeneratorOptions options) =>
        options.MessagesPerSecond is { } rate ? string.Create(CultureInfo.InvariantCulture, $", offered {rate:N0} messages/s") : string.Empty;
}
