// The verdict on one message of a request.
namespace FusionService.Ingest;

/// <summary>What became of one message.</summary>
/// <param name="Index">Position of the message in the request (0-based; NDJSON: line order, blank lines skipped).</param>
/// <param name="Status"><c>accepted</c> (stored now), <c>duplicate</c> (stored before; nothing changed) or <c>rejected</c>.</param>
/// <param name="Field">For a rejection: the field at fault (empty when the whole message is).</param>
/// <param name="Reason">For a rejection: why.</param>
/// <param name="DroppedFields">For an accepted or duplicate message: optional fields that were invalid and left out
/// (the rest of the message was used); absent when every field was used.</param>
public sealed record IngestMessageResult(int Index, string Status, string? Field = null, string? Reason = null, IReadOnlyList<DroppedField>? DroppedFields = null);
