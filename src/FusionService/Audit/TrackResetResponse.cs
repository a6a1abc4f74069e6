// A track reset.
namespace FusionService.Audit;

/// <summary>A GNSS fix that re-initialised the track after sustained rejection.</summary>
/// <param name="Time">Measurement time of that fix.</param>
public sealed record TrackResetResponse(DateTimeOffset Time);
