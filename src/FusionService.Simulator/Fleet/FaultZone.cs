// A rectangle of the town where GNSS misbehaves.
namespace FusionService.Simulator.Fleet;

/// <summary>An axis-aligned rectangle of the demo town in the depot's local frame (east/north metres).</summary>
/// <param name="Name">Invented name of the place.</param>
/// <param name="MinEastM">West edge, metres east of the depot.</param>
/// <param name="MaxEastM">East edge, metres east of the depot.</param>
/// <param name="MinNorthM">South edge, metres north of the depot.</param>
/// <param name="MaxNorthM">North edge, metres north of the depot.</param>
public sealed record FaultZone(string Name, double MinEastM, double MaxEastM, double MinNorthM, double MaxNorthM)
{
    /// <summary>True when (<paramref name="eastM"/>, <paramref name="northM"/>) lies inside the rectangle (edges included).</summary>
    /// <param name="eastM">East from the depot, metres.</param>
    /// <param name="northM">North from the depot, metres.</param>
    public bool Contains(double eastM, double northM) =>
        eastM >= MinEastM && eastM <= MaxEastM && northM >= MinNorthM && northM <= MaxNorthM;
}
