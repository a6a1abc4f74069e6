namespace FusionService.Estimation.Tracking;

/// <summary>Life cycle of a track.</summary>
public enum TrackPhase : byte
{
    /// <summary>No position fix yet.</summary>
    Empty = 0,

    /// <summary>Has a position fix, waiting for a heading (course, a second fix far enough away, or a standstill).</summary>
    AwaitingHeading = 1,

    /// <summary>The full filter runs.</summary>
    Running = 2,
}
