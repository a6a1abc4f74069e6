// What a load run measured.
using System.Globalization;

namespace FusionService.Simulator.Load;

/// <summary>Result of <see cref="LoadGenerator.RunAsync"/>.</summary>
/// <param name="BatchesAccepted">Batches answered with a 2xx status.</param>
/// <param name="MessagesAccepted">Messages in accepted batches.</param>
/// <param name="BatchesRejected">Batches answered otherwise or lost to a network error (not retried).</param>
/// <param name="Elapsed">Wall-clock time of the run.</param>
/// <param name="AcceptedPerSecond">Accepted messages per wall-clock second.</param>
/// <param name="P50AckMs">Median time from sending a batch to its answer, milliseconds (nearest-rank, accepted batches).</param>
/// <param name="P99AckMs">99th percentile of the same, milliseconds (nearest-rank).</param>
public sealed record LoadReport(
    long BatchesAccepted, long MessagesAccepted, long BatchesRejected, TimeSpan Elapsed, double AcceptedPerSecond, double P50AckMs, double P99AckMs)
{
    /// <summary>One line for a console.</summary>
    public string ToSummaryLine() => string.Create(
        CultureInfo.InvariantCulture,
        $"accepted {MessagesAccepted:N0} messages in {BatchesAccepted:N0} batches ({BatchesRejected:N0} rejected) in {Elapsed.TotalSeconds:F1} s: {AcceptedPerSecond:N0} msg/s, ack p50 {P50AckMs:F1} ms, p99 {P99AckMs:F1} ms");
}
