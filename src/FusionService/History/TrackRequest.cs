// A validated track history request.
namespace FusionService.History;

/// <summary>A track request after validation.</summary>
/// <param name="Vehicle">Vehicle id within the caller's fleet.</param>
/// <param name="FromUs">Inclusive window start, Unix microseconds.</param>
/// <param name="ToUs">Exclusive window end, Unix microseconds.</param>
/// <param name="Kind">Which history.</param>
/// <param name="StepUs">Least spacing of the output points, microseconds (0: every point).</param>
/// <param name="Format">Output format.</param>
public sealed record TrackRequest(string Vehicle, long FromUs, long ToUs, TrackKind Kind, long StepUs, TrackFormat Format);
