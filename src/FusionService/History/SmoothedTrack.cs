// The result of a smoothing replay for one request.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Smoothing;

namespace FusionService.History;

/// <summary>Smoothed segments over a window and, when asked for, the wheel speeds replayed to get them.</summary>
/// <param name="Segments">Smoothed segments in time order (instants before the window are dropped except the last one).</param>
/// <param name="WheelSpeeds">Replayed wheel-speed measurements in canonical order (from the start of the replay); empty
/// unless the build was asked to keep them.</param>
/// <param name="FromCheckpoint">Whether the replay started from a stored checkpoint.</param>
internal sealed record SmoothedTrack(IReadOnlyList<SmoothedSegment> Segments, IReadOnlyList<Measurement> WheelSpeeds, bool FromCheckpoint);
