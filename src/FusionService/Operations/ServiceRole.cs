// What one process of the service does: everything, or only the history reads.
namespace FusionService.Operations;

/// <summary>The work a process of the service takes on (<c>Service:Role</c>, <see cref="ServiceRoleOptions"/>).</summary>
public enum ServiceRole
{
    /// <summary>Everything: ingest, the vehicles' tracks, alerts and webhooks, the history reads, the dashboard.</summary>
    All,

    /// <summary>
    /// Only the history reads (track in every kind and format, distance, diagnostics, explain, raw) and the operations
    /// endpoints, all answered from the store; no ingest, no tracks, no alert scans or webhook deliveries, no partition
    /// maintenance, no dashboard.
    /// </summary>
    HistoryReads,
}
