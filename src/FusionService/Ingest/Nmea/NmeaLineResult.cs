// What became of one line of an NMEA body.
namespace FusionService.Ingest.Nmea;

/// <summary>The verdict on one non-blank line.</summary>
/// <param name="Line">Line number, 1-based (blank lines count).</param>
/// <param name="Status">accepted (stored now), duplicate (stored before), rejected (with field and reason) or ignored (a valid sentence that carries no usable fix, with the reason).</param>
/// <param name="Field">For rejected or ignored lines: the field at fault (empty for the whole line).</param>
/// <param name="Reason">For rejected or ignored lines: why.</param>
/// <param name="DroppedFields">For an accepted or duplicate line: its fields (speed, course) that were invalid and left
/// out while the fix was stored; absent when every field was used.</param>
public sealed record NmeaLineResult(int Line, string Status, string? Field = null, string? Reason = null, IReadOnlyList<DroppedField>? DroppedFields = null);
