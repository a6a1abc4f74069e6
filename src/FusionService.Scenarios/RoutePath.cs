// Geometry of a route: straight legs joined by circular arcs.
using FusionService.Estimation.Geodesy;

namespace FusionService.Scenarios;

/// <summary>
/// A planar path through waypoints made of straight lines and circular arcs tangent to both adjoining legs
/// (radius shrunk so an arc never uses more than half of either leg), parameterised by arc length (station).
/// U-turns (turns above 179 degrees) and legs shorter than 1 m are rejected.
/// </summary>
internal sealed class RoutePath
{
    private const double MinLegM = 1.0;
    private const double MaxTurnRad = 179.0 * Math.PI / 180.0;
    private const double StraightTurnRad = 1e-9;

    private RoutePath(PathSegment[] segments, double lengthM, int[] waypointSegment, bool[] waypointAtArcMiddle, double[] turnRad)
    {
        Segments = segments;
        LengthM = lengthM;
        WaypointSegment = waypointSegment;
        WaypointAtArcMiddle = waypointAtArcMiddle;
        TurnRad = turnRad;
    }

    public PathSegment[] Segments { get; }

    public double LengthM { get; }

    /// <summary>For each waypoint: index of the segment that starts at it (Segments.Length for the route end) or of the arc whose middle it is.</summary>
    public int[] WaypointSegment { get; }

    /// <summary>For each waypoint: true when it is represented by the middle of a corner arc.</summary>
    public bool[] WaypointAtArcMiddle { get; }

    /// <summary>Signed turn at each waypoint, radians (0 at the ends).</summary>
    public double[] TurnRad { get; }

    public static RoutePath Build(IReadOnlyList<RouteWaypoint> waypoints, double cornerRadiusM)
    {
        int legs = waypoints.Count - 1;
        var lengthM = new double[legs];
        var ux = new double[legs];
        var uy = new double[legs];
        var headingRad = new double[legs];
        for (int j = 0; j < legs; j++)
        {
            double dx = waypoints[j + 1].EastM - waypoints[j].EastM;
            double dy = waypoints[j + 1].NorthM - waypoints[j].NorthM;
            lengthM[j] = Math.Sqrt((dx * dx) + (dy * dy));
            if (!(lengthM[j] >= MinLegM))
            {
                throw new ArgumentException($"leg {j} is shorter than {MinLegM} m", nameof(waypoints));
            }

            ux[j] = dx / lengthM[j];
            uy[j] = dy / lengthM[j];
            headingRad[j] = Math.Atan2(dy, dx);
        }

        var tangentM = new double[waypoints.Count];
        var radiusM = new double[waypoints.Count];
        var turnRad = new double[waypoints.Count];
        for (int i = 1; i < legs; i++)
        {
            double delta = Angles.WrapPi(headingRad[i] - headingRad[i - 1]);
            turnRad[i] = delta;
            if (Math.Abs(delta) > MaxTurnRad)
            {
                throw new ArgumentException($"waypoint {i} asks for a U-turn ({Angles.RadiansToDegrees(delta):F1} deg)", nameof(waypoints));
            }

            if (Math.Abs(delta) < StraightTurnRad)
            {
                continue;
            }

            double halfTan = Math.Tan(Math.Abs(delta) / 2.0);
            radiusM[i] = Math.Min(cornerRadiusM, 0.5 * Math.Min(lengthM[i - 1], lengthM[i]) / halfTan);
            tangentM[i] = radiusM[i] * halfTan;
        }

        var segments = new List<PathSegment>();
        var waypointSegment = new int[waypoints.Count];
        var atArcMiddle = new bool[waypoints.Count];
        double station = 0.0;
        for (int j = 0; j < legs; j++)
        {
            double lineM = Math.Max(0.0, lengthM[j] - tangentM[j] - tangentM[j + 1]);
            if (lineM > 0.0)
            {
                segments.Add(PathSegment.Line(
                    station,
                    lineM,
                    waypoints[j].EastM + (ux[j] * tangentM[j]),
                    waypoints[j].NorthM + (uy[j] * tangentM[j]),
                    headingRad[j],
                    j));
                station += lineM;
            }

            int next = j + 1;
            if (next < legs && tangentM[next] > 0.0)
            {
                double arcM = radiusM[next] * Math.Abs(turnRad[next]);
                waypointSegment[next] = segments.Count;
                atArcMiddle[next] = true;
                segments.Add(PathSegment.Arc(
                    station,
                    arcM,
                    waypoints[next].EastM - (ux[j] * tangentM[next]),
                    waypoints[next].NorthM - (uy[j] * tangentM[next]),
                    headingRad[j],
                    Math.Sign(turnRad[next]),
                    radiusM[next],
                    next));
                station += arcM;
            }
            else
            {
                waypointSegment[next] = segments.Count;
            }
        }

        return new RoutePath([.. segments], station, waypointSegment, atArcMiddle, turnRad);
    }

    /// <summary>Position and heading at <paramref name="stationM"/> on segment <paramref name="segmentIndex"/> (station clamped to the segment).</summary>
    public void Evaluate(int segmentIndex, double stationM, out double eastM, out double northM, out double headingRad)
    {
        PathSegment seg = Segments[segmentIndex];
        double along = Math.Clamp(stationM - seg.StartStationM, 0.0, seg.LengthM);
        if (seg.Sign == 0)
        {
            eastM = seg.StartEastM + (along * Math.Cos(seg.StartHeadingRad));
            northM = seg.StartNorthM + (along * Math.Sin(seg.StartHeadingRad));
            headingRad = Angles.WrapPi(seg.StartHeadingRad);
            return;
        }

        double psi = seg.StartHeadingRad + (seg.Sign * along / seg.RadiusM);
        eastM = seg.CenterEastM + (seg.Sign * seg.RadiusM * Math.Sin(psi));
        northM = seg.CenterNorthM - (seg.Sign * seg.RadiusM * Math.Cos(psi));
        headingRad = Angles.WrapPi(psi);
    }
}
