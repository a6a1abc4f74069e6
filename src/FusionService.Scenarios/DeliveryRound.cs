// A van's delivery round: stops in visiting order and the route that joins them.
using System.Collections.ObjectModel;

namespace FusionService.Scenarios;

/// <summary>A delivery round planned by <see cref="DeliveryNetwork.PlanRound"/>: depot, stops, back to the depot.</summary>
public sealed class DeliveryRound
{
    internal DeliveryRound(DeliveryNetwork network, int vanIndex, int seed, DeliveryStop[] stops, RouteWaypoint[] waypoints)
    {
        Network = network;
        VanIndex = vanIndex;
        Seed = seed;
        Stops = Array.AsReadOnly(stops);
        Waypoints = Array.AsReadOnly(waypoints);
    }

    /// <summary>The street grid the round runs on.</summary>
    public DeliveryNetwork Network { get; }

    /// <summary>Which van (0-based) of the fleet.</summary>
    public int VanIndex { get; }

    /// <summary>The fleet seed the round was planned from.</summary>
    public int Seed { get; }

    /// <summary>Stops in visiting order.</summary>
    public ReadOnlyCollection<DeliveryStop> Stops { get; }

    /// <summary>
    /// The route for <see cref="RouteDriver"/>: the depot, the intersections turned at or passed, the stops (with their
    /// dwell) and the depot again. Never asks for a U-turn.
    /// </summary>
    public ReadOnlyCollection<RouteWaypoint> Waypoints { get; }

    /// <summary>Drives the round with <see cref="RouteDriver"/>; the frame origin is the network's, the seed derives from the round's.</summary>
    /// <param name="options">Driving limits, start time and sample period; null for the defaults. Its origin is replaced by the network's.</param>
    public TruthTrajectory Drive(RouteDriverOptions? options = null)
    {
        RouteDriverOptions o = (options ?? new RouteDriverOptions()) with
        {
            OriginLatitudeDeg = Network.OriginLatitudeDeg,
            OriginLongitudeDeg = Network.OriginLongitudeDeg,
        };
        return RouteDriver.Drive(Waypoints, o, ScenarioRandom.DeriveSeed(Seed, 0x4452495645UL + (ulong)VanIndex));
    }
}
