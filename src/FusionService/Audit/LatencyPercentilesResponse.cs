// Arrival latency percentiles.
namespace FusionService.Audit;

/// <summary>Percentiles of received_at - measured_at, milliseconds (linear interpolation between order statistics).</summary>
/// <param name="P50">Median.</param>
/// <param name="P95">95th percentile.</param>
/// <param name="P99">99th percentile.</param>
public sealed record LatencyPercentilesResponse(double P50, double P95, double P99);
