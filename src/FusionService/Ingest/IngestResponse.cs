// The answer to an ingest request.
namespace FusionService.Ingest;

/// <summary>Counts and per-message verdicts of an ingest request. Every message counted as accepted is committed
/// in PostgreSQL when this is sent.</summary>
/// <param name="Accepted">Messages stored by this request.</param>
/// <param name="Duplicate">Messages already stored (same vehicle, kind, time and id or content).</param>
/// <param name="Rejected">Messages refused; see <paramref name="Results"/>.</param>
/// <param name="Results">One entry per message, in request order.</param>
public sealed record IngestResponse(int Accepted, int Duplicate, int Rejected, IReadOnlyList<IngestMessageResult> Results);
