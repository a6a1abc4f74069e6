// A span in which GNSS positions carry a multipath bias.
namespace FusionService.Scenarios;

/// <summary>
/// A span in which every GNSS position fix carries a constant extra error (a reflected signal pulling the solution one
/// way, e.g. beside a building), while GNSS speed and course (Doppler) stay unaffected. Values are invented scenario
/// settings (episodes of 15-60 m lasting 5-40 s are the project's working figures, from memory).
/// </summary>
/// <param name="Span">When the bias applies.</param>
/// <param name="BiasEastM">East error added to each fix, metres.</param>
/// <param name="BiasNorthM">North error added to each fix, metres.</param>
public readonly record struct MultipathEpisode(TimeInterval Span, double BiasEastM, double BiasNorthM)
{
    /// <summary>Length of the bias, metres.</summary>
    public double BiasM => Math.Sqrt((BiasEastM * BiasEastM) + (BiasNorthM * BiasNorthM));
}
