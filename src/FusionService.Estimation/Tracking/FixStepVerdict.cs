namespace FusionService.Estimation.Tracking;

/// <summary>What <see cref="MultipathStepDetector.Observe"/> says about a GNSS fix.</summary>
public enum FixStepVerdict
{
    /// <summary>No suspected multipath episode: judge and fuse the fix as usual.</summary>
    Fuse,

    /// <summary>The fix belongs to a suspected multipath episode: set it aside.</summary>
    SetAside,

    /// <summary>A suspected episode begins at this fix (the one before it, judged before the step showed, may be its first): set it aside.</summary>
    EpisodeBegan,
}
