// Arrival latency percentiles of one sensor kind.
namespace FusionService.Storage.Audit;

/// <summary>
/// Percentiles of the arrival latency (received_at - measured_at) of one sensor kind, milliseconds, by PostgreSQL's
/// <c>percentile_cont</c>: linear interpolation between the order statistics at rank p (n - 1) (Hyndman and Fan 1996,
/// definition 7). Negative values mean the sender's clock ran ahead of the service's.
/// </summary>
/// <param name="Kind">Sensor kind code.</param>
/// <param name="Count">Measurements the percentiles are over.</param>
/// <param name="P50Ms">Median, milliseconds.</param>
/// <param name="P95Ms">95th percentile, milliseconds.</param>
/// <param name="P99Ms">99th percentile, milliseconds.</param>
public readonly record struct LatencySummary(short Kind, long Count, double P50Ms, double P95Ms, double P99Ms);
