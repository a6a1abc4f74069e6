// The explanation of one vehicle's fused state at one instant.
namespace FusionService.Audit;

/// <summary>The fused state at a time and every measurement of the window around it with what the filter did with it.</summary>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="Time">The instant asked about.</param>
/// <param name="State">The fused state after the last measurement at or before <paramref name="Time"/>; null when the track was not running then.</param>
/// <param name="Measurements">The measurements of [time - window_s / 2, time + window_s / 2] in processing order.</param>
/// <param name="Replay">Where the replay that produced this started.</param>
/// <param name="Caution">What the numbers are and are not.</param>
public sealed record ExplainResponse(
    string Vehicle,
    DateTimeOffset Time,
    ExplainStateResponse? State,
    IReadOnlyList<ExplainedMeasurement> Measurements,
    ExplainReplayResponse Replay,
    string Caution);
