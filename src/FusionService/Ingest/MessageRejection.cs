// Why one message was refused.
namespace FusionService.Ingest;

/// <summary>Why a message was refused.</summary>
/// <param name="Field">The field at fault (JSON name), or empty when the message as a whole is.</param>
/// <param name="Reason">What is wrong with it.</param>
public sealed record MessageRejection(string Field, string Reason);
