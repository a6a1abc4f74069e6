namespace FusionService.Estimation.Tracking;

/// <summary>What the track did with a measurement; the one outcome type from the track to storage to replay.</summary>
/// <remarks>
/// The numeric values are the codes stored as <c>smallint</c> elements of <c>measurement_chunks.outcome</c> (checked by a
/// constraint; translated by the storage's <c>OutcomeCodes</c>): they must not
/// change. <see cref="Conflict"/> and <see cref="TrackReset"/> are never stored (the service stores them as
/// <see cref="Unused"/> and as <see cref="Accepted"/> with the track-reset flag).
/// </remarks>
public enum OutcomeKind : byte
{
    /// <summary>Fused into the state.</summary>
    Accepted = 0,

    /// <summary>Rejected by the chi-square gate (see the NIS and dimension of the outcome).</summary>
    Gated = 1,

    /// <summary>Older than the lag window allows; not fused live (kept by the service for smoothing).</summary>
    TooLate = 2,

    /// <summary>An exact duplicate of a measurement already held; ignored.</summary>
    Duplicate = 3,

    /// <summary>Stored, not yet processed by the track (never returned by the track itself).</summary>
    Pending = 4,

    /// <summary>Used to start the track (first fixes, course or standstill before the state exists).</summary>
    Initialising = 5,

    /// <summary>Arrived before the track had a position; held but not fused.</summary>
    BeforeStart = 6,

    /// <summary>Not used: course below the speed threshold on a velocity-only message, or similar (see the reason).</summary>
    Unused = 7,

    /// <summary>
    /// The filter failed numerically on it (a covariance that lost positive definiteness, a value that is not finite):
    /// it is skipped, the state stays as it was before it, and the track goes on. See the outcome's
    /// <see cref="MeasurementOutcome.Failure"/>.
    /// </summary>
    Unusable = 8,

    /// <summary>Same time, kind and message key as a held measurement but different values; ignored.</summary>
    Conflict = 9,

    /// <summary>A GNSS fix that re-initialised the track's position after sustained rejection (ferry, tow truck, long tunnel).</summary>
    TrackReset = 10,
}
