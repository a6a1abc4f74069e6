// Where an explanation's replay started.
namespace FusionService.Audit;

/// <summary>How the explanation was computed.</summary>
/// <param name="From">Time of the checkpoint or of the first stored measurement the replay started from (null when nothing was replayed).</param>
/// <param name="FromCheckpoint">True when it started from a stored filter checkpoint.</param>
/// <param name="Measurements">Stored measurements re-processed.</param>
/// <param name="Exact">True when the replay saw every stored measurement the live track saw before the window, so it reproduces the live decisions.</param>
public sealed record ExplainReplayResponse(DateTimeOffset? From, bool FromCheckpoint, long Measurements, bool Exact);
