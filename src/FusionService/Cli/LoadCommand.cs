// `load --url URL --key KEY [--vehicles N] [--batches B] [--batch-size S] [--concurrency C]`: posts synthetic telemetry.
using System.Globalization;
using FusionService.Simulator.Load;

namespace FusionService.Cli;

/// <summary>
/// The <c>load</c> command: posts synthetic telemetry for many vehicles to a running service in batches and reports
/// accepted messages per second and the p50/p99 acknowledgement latency (a load tool, not a test).
/// </summary>
public static class LoadCommand
{
    /// <summary>Usage text.</summary>
    public const string Usage = "usage: load --url http://127.0.0.1:5080 --key INGEST_KEY [--vehicles 1000] [--batches 200] [--batch-size 500] [--concurrency 8]";

    /// <summary>True when <paramref name="args"/> ask for this command.</summary>
    public static bool Matches(string[] args) => args is ["load", ..];

    /// <summary>Runs the load and prints one summary line.</summary>
    /// <returns>The process exit code: 0, or 2 for bad arguments, or 1 when any batch was refused.</returns>
    public static async Task<int> RunAsync(string[] args, TextWriter output, TextWriter error, CancellationToken cancellationToken)
    {
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
            };
            options.Validate();
        }
        catch (Exception e) when (e is FormatException or ArgumentException)
        {
            await error.WriteLineAsync($"{e.Message} {Usage}").ConfigureAwait(false);
            return 2;
        }

        using var http = new HttpClient { Timeout = TimeSpan.FromSeconds(60) };
        await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture,
            $"posting {options.TotalBatches:N0} batches of {options.BatchSize} messages for {options.VehicleCount:N0} vehicles, {options.Concurrency} at a time, to {options.Endpoint}")).ConfigureAwait(false);
        LoadReport report = await new LoadGenerator(http, options).RunAsync(cancellationToken).ConfigureAwait(false);
        await output.WriteLineAsync(report.ToSummaryLine()).ConfigureAwait(false);
        return report.BatchesRejected == 0 ? 0 : 1;
    }

    private static int Int(Dictionary<string, string> values, string name, int fallback) =>
        values.TryGetValue(name, out string? text)
            ? int.TryParse(text, NumberStyles.Integer, CultureInfo.InvariantCulture, out int value) ? value : throw new FormatException($"--{name} must be a whole number, was '{text}'.")
            : fallback;
}
