using System.Runtime.CompilerServices;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// The last GNSS fixes of <see cref="MultipathStepDetector"/>, <see cref="Stride"/> values per fix, oldest first: time
/// (Unix microseconds as a double, exact below 2⁵³), east and north residual against the track's predicted position
/// (metres), the fix's white variance (m²), and east and north sum of the fix updates' pulls on the position before
/// this fix (metres). A fixed-size ring inline in the track state (no allocation; copied with it).
/// </summary>
[InlineArray(Length)]
public struct FixResidualRing
{
    /// <summary>Fixes remembered.</summary>
    public const int Fixes = 4;

    /// <summary>Values per fix.</summary>
    public const int Stride = 6;

    /// <summary>Number of doubles held.</summary>
    public const int Length = Fixes * Stride;

    private double _element;
}
