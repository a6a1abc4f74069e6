// The API's names of the filter's decisions.
using FusionService.Estimation.Tracking;

namespace FusionService.Audit;

/// <summary>Names the API uses for the filter's decisions (snake_case, as in the contracts); sensor names are the core's <see cref="Estimation.Measurements.SensorNames"/>.</summary>
public static class DecisionNames
{
    /// <summary>The decision name of an outcome: accepted, gated, too_late, duplicate, pending, initialising, before_start, track_reset, unused, unusable.</summary>
    public static string Of(OutcomeKind kind) => kind switch
    {
        OutcomeKind.Accepted => "accepted",
        OutcomeKind.Gated => "gated",
        OutcomeKind.TooLate => "too_late",
        OutcomeKind.Duplicate or OutcomeKind.Conflict => "duplicate",
        OutcomeKind.Pending => "pending",
        OutcomeKind.Initialising => "initialising",
        OutcomeKind.BeforeStart => "before_start",
        OutcomeKind.TrackReset => "track_reset",
        OutcomeKind.Unusable => "unusable",
        _ => "unused",
    };
}
