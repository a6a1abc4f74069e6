// Which history a track request returns.
namespace FusionService.History;

/// <summary>The kind of track history.</summary>
public enum TrackKind
{
    /// <summary>Stored GNSS position fixes with the live filter's verdict on each.</summary>
    Raw,

    /// <summary>Stored fused states of the live (forward) filter.</summary>
    Filtered,

    /// <summary>RTS-smoothed states from a replay of every stored measurement.</summary>
    Smoothed,
}
