// The fixes and the per-line verdicts of one NMEA body.
namespace FusionService.Ingest.Nmea;

/// <summary>What <see cref="NmeaBodyParser"/> made of a body.</summary>
/// <param name="Fixes">Fixes in body order, each listing its lines.</param>
/// <param name="Lines">Verdicts of the lines that produced no fix (rejected or ignored), in line order.</param>
/// <param name="SentenceLines">Number of non-blank lines.</param>
public sealed record NmeaParseResult(IReadOnlyList<NmeaFix> Fixes, IReadOnlyList<NmeaLineResult> Lines, int SentenceLines);
