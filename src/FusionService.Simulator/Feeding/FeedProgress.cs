// A snapshot of the feeder's counters.
using System.Globalization;

namespace FusionService.Simulator.Feeding;

/// <summary>Counters of a running <see cref="FleetFeeder"/>.</summary>
/// <param name="Elapsed">Wall-clock time since the start.</param>
/// <param name="Vans">Vans being fed.</param>
/// <param name="VansFinished">Vans whose every batch has been acknowledged or given up.</param>
/// <param name="MessagesSent">Messages sent, counting every attempt (a resent batch counts again).</param>
/// <param name="MessagesAcknowledged">Messages in batches the service acknowledged.</param>
/// <param name="BatchesAcknowledged">Batches the service acknowledged.</param>
/// <param name="Retries">Attempts after the first (503, 429, server errors, network errors, missing acknowledgements).</param>
/// <param name="Failures">Batches given up (attempts exhausted or refused with a 4xx status).</param>
/// <param name="MessagesPerSecond">Acknowledged messages per wall-clock second over the last report interval.</param>
public sealed record FeedProgress(
    TimeSpan Elapsed,
    int Vans,
    int VansFinished,
    long MessagesSent,
    long MessagesAcknowledged,
    long BatchesAcknowledged,
    long Retries,
    long Failures,
    double MessagesPerSecond)
{
    /// <summary>One line for a console, e.g. "[00:00:12] vans 12 (3 done) | 1,234 msg/s | sent 20,000 | acked 19,500 | retries 2 | failures 0".</summary>
    public string ToSummaryLine() => string.Create(
        CultureInfo.InvariantCulture,
        $"[{Elapsed:hh\\:mm\\:ss}] vans {Vans} ({VansFinished} done) | {MessagesPerSecond:N0} msg/s | sent {MessagesSent:N0} | acked {MessagesAcknowledged:N0} | retries {Retries:N0} | failures {Failures:N0}");
}
