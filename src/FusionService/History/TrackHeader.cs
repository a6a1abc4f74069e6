// What a track document says about itself.
namespace FusionService.History;

/// <summary>Header of a track document.</summary>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="Kind">Track kind, lower case (raw, filtered, smoothed).</param>
/// <param name="FromUs">Window start, Unix microseconds.</param>
/// <param name="ToUs">Window end (exclusive), Unix microseconds.</param>
/// <param name="Caution">The estimates caution.</param>
internal sealed record TrackHeader(string Vehicle, string Kind, long FromUs, long ToUs, string Caution);
