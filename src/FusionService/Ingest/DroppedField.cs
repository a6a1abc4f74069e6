// An optional field of an accepted message that was not used.
namespace FusionService.Ingest;

/// <summary>An optional field that was left out of an otherwise valid message, and why. The rest of the message was
/// used: a bad <c>course_deg</c> keeps the position and the speed; a bad <c>speed_mps</c> or
/// <c>speed_accuracy_mps</c> drops the velocity (speed and course) and keeps the position.</summary>
/// <param name="Field">The field left out (JSON name).</param>
/// <param name="Reason">Why it was left out.</param>
public sealed record DroppedField(string Field, string Reason);
