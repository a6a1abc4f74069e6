// What the filter did with a stored measurement.
namespace FusionService.Storage.Measurements;

/// <summary>What the filter did with a measurement; stored as <c>smallint</c> in <c>measurement_verdicts.outcome</c> (and, for
/// rows stored before migration 0005, in <c>measurements.outcome</c>).
/// The numeric values are part of the schema (checked by a constraint) and must not change.</summary>
public enum MeasurementOutcome : short
{
    /// <summary>Used in a filter update.</summary>
    Accepted = 0,

    /// <summary>Rejected by the innovation gate (normalised innovation squared above the threshold).</summary>
    Gated = 1,

    /// <summary>Older than the window the filter can replay; stored but not used.</summary>
    TooLate = 2,

    /// <summary>Judged a duplicate of a measurement already used.</summary>
    Duplicate = 3,

    /// <summary>Stored, not yet processed by the filter.</summary>
    Pending = 4,

    /// <summary>Used to start the track (first fixes, course or standstill before the state existed); migration 0002.</summary>
    Initialising = 5,

    /// <summary>Arrived before the track had a position; held but not fused; migration 0002.</summary>
    BeforeStart = 6,

    /// <summary>Processed but not usable (for example a course below the speed threshold); migration 0002.</summary>
    Unused = 7,

    /// <summary>The filter failed numerically on it (see <c>OutcomeKind.Unusable</c> of the core); skipped; migration 0010.</summary>
    Unusable = 8,
}
