using System.Runtime.CompilerServices;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// The last chord offsets of <see cref="StreamAgreement"/>, radians: a fixed-size ring inline in the track state (no
/// allocation; copied with it).
/// </summary>
[InlineArray(Length)]
public struct ChordOffsetRing
{
    /// <summary>Number of chords the course verdict looks back over.</summary>
    public const int Length = 9;

    private double _element;
}
