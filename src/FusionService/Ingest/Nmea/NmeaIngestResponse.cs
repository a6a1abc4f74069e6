// The answer to an NMEA upload.
namespace FusionService.Ingest.Nmea;

/// <summary>Line counts and per-line verdicts of an NMEA upload. Every line counted as accepted is committed in PostgreSQL when this is sent.</summary>
/// <param name="Accepted">Lines whose fix was stored by this request (a GGA and the RMC of its epoch count as two).</param>
/// <param name="Duplicate">Lines whose fix was stored before.</param>
/// <param name="Rejected">Lines refused; see <paramref name="Results"/>.</param>
/// <param name="Ignored">Valid sentences that carry no usable fix (other formatters, no fix, void status).</param>
/// <param name="Results">One entry per non-blank line, in line order.</param>
public sealed record NmeaIngestResponse(int Accepted, int Duplicate, int Rejected, int Ignored, IReadOnlyList<NmeaLineResult> Results);
