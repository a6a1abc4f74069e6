namespace FusionService.Estimation.Tracking;

/// <summary>What the track did with a measurement.</summary>
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

    /// <summary>Same time, kind and message key as a held measurement but different values; ignored.</summary>
    Conflict = 4,

    /// <summary>Used to start the track (first fixes, course or standstill before the state exists).</summary>
    Initialising = 5,

    /// <summary>Arrived before the track had a position; held but not fused.</summary>
    BeforeStart = 6,

    /// <summary>A GNSS fix that re-initialised the track's position after sustained rejection (ferry, tow truck, long tunnel).</summary>
    TrackReset = 7,

    /// <summary>Not used: course below the speed threshold on a velocity-only message, or similar (see the reason).</summary>
    Unused = 8,

    /// <summary>
    /// The filter failed numerically on it (a covariance that lost positive definiteness, a value that is not finite):
    /// it is skipped, the state stays as it was before it, and the track goes on. See the outcome's
    /// <see cref="MeasurementOutcome.Failure"/>.
    /// </summary>
    Unusable = 9,
}
