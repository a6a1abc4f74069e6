// An invented town street grid with a depot, for planning delivery rounds.
using System.Globalization;

namespace FusionService.Scenarios;

/// <summary>
/// An invented town: a rectangular grid of streets with square blocks (120 m by default), east-west streets and
/// north-south lanes with invented names, and a depot at the south-west corner, which is also the origin of the local
/// frame. Plans reproducible delivery rounds for several vans.
/// </summary>
public sealed class DeliveryNetwork
{
    private static readonly string[] EastWestNames =
    [
        "Quillfern Street", "Marrowvane Street", "Tobbinfold Street", "Brindlewick Street", "Corvathy Street", "Pellomar Street",
        "Haskerby Street", "Vintrask Street", "Orlembe Street", "Caddrinel Street", "Sulvaine Street", "Gorrowind Street",
    ];

    private static readonly string[] NorthSouthNames =
    [
        "Ambertoft Lane", "Bexhollow Lane", "Cindrell Lane", "Drummaskey Lane", "Elverquin Lane", "Fallowmist Lane",
        "Grendlebay Lane", "Hobbernot Lane", "Isquarrow Lane", "Jessamill Lane", "Kettlewarn Lane", "Lumbrisk Lane",
    ];

    // Directions: 0 east, 1 north, 2 west, 3 south; 4 none (at the start).
    private static readonly int[] StepColumn = [1, 0, -1, 0];
    private static readonly int[] StepRow = [0, 1, 0, -1];
    private const int NoDirection = 4;

    /// <summary>Creates a grid of <paramref name="laneCount"/> north-south lanes by <paramref name="streetCount"/> east-west streets.</summary>
    /// <param name="laneCount">Number of north-south lanes (grid columns), 2 to 12. Default 10.</param>
    /// <param name="streetCount">Number of east-west streets (grid rows), 2 to 12. Default 8.</param>
    /// <param name="blockM">Block edge, metres, 40 to 500. Default 120.</param>
    /// <param name="originLatitudeDeg">Latitude of the depot (frame origin), degrees. Default <see cref="InventedPlace.LatitudeDeg"/> (open sea).</param>
    /// <param name="originLongitudeDeg">Longitude of the depot, degrees. Default <see cref="InventedPlace.LongitudeDeg"/> (open sea).</param>
    public DeliveryNetwork(int laneCount = 10, int streetCount = 8, double blockM = 120.0, double originLatitudeDeg = InventedPlace.LatitudeDeg, double originLongitudeDeg = InventedPlace.LongitudeDeg)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(laneCount, 2);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(laneCount, NorthSouthNames.Length);
        ArgumentOutOfRangeException.ThrowIfLessThan(streetCount, 2);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(streetCount, EastWestNames.Length);
        if (!(blockM >= 40.0 && blockM <= 500.0))
        {
            throw new ArgumentOutOfRangeException(nameof(blockM), blockM, "block edge must be within [40, 500] m");
        }

        _ = new ScenarioFrame(originLatitudeDeg, originLongitudeDeg);
        LaneCount = laneCount;
        StreetCount = streetCount;
        BlockM = blockM;
        OriginLatitudeDeg = originLatitudeDeg;
        OriginLongitudeDeg = originLongitudeDeg;
    }

    /// <summary>Number of north-south lanes; lane c runs along east = c x <see cref="BlockM"/>.</summary>
    public int LaneCount { get; }

    /// <summary>Number of east-west streets; street r runs along north = r x <see cref="BlockM"/>.</summary>
    public int StreetCount { get; }

    /// <summary>Block edge, metres.</summary>
    public double BlockM { get; }

    /// <summary>Latitude of the depot and frame origin, degrees.</summary>
    public double OriginLatitudeDeg { get; }

    /// <summary>Longitude of the depot and frame origin, degrees.</summary>
    public double OriginLongitudeDeg { get; }

    /// <summary>The depot: the intersection of lane 0 and street 0, at the frame origin (0, 0).</summary>
    public static (double EastM, double NorthM) DepotM => (0.0, 0.0);

    /// <summary>Invented name of north-south lane <paramref name="column"/>.</summary>
    /// <param name="column">Lane index, 0 to <see cref="LaneCount"/> - 1.</param>
    public string LaneName(int column) => NorthSouthNames[CheckIndex(column, LaneCount)];

    /// <summary>Invented name of east-west street <paramref name="row"/>.</summary>
    /// <param name="row">Street index, 0 to <see cref="StreetCount"/> - 1.</param>
    public string StreetName(int row) => EastWestNames[CheckIndex(row, StreetCount)];

    /// <summary>
    /// Plans a round for van <paramref name="vanIndex"/>: <paramref name="stopCount"/> stops on distinct blocks (each
    /// between 25 % and 75 % along its block), visited nearest-first from the depot, joined by shortest grid paths without
    /// U-turns, and back to the depot. Reproducible from (<paramref name="seed"/>, <paramref name="vanIndex"/>).
    /// </summary>
    /// <param name="vanIndex">Van number, non-negative; different vans get different rounds.</param>
    /// <param name="stopCount">Number of stops, 1 to the number of blocks.</param>
    /// <param name="seed">Fleet seed.</param>
    /// <param name="minDwellS">Shortest stop, seconds. Default 60.</param>
    /// <param name="maxDwellS">Longest stop, seconds. Default 300.</param>
    public DeliveryRound PlanRound(int vanIndex, int stopCount, int seed, double minDwellS = 60.0, double maxDwellS = 300.0)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(vanIndex);
        int edgeCount = ((LaneCount - 1) * StreetCount) + (LaneCount * (StreetCount - 1));
        ArgumentOutOfRangeException.ThrowIfLessThan(stopCount, 1);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(stopCount, edgeCount);
        if (!(minDwellS >= 0 && maxDwellS >= minDwellS && double.IsFinite(maxDwellS)))
        {
            throw new ArgumentOutOfRangeException(nameof(maxDwellS), maxDwellS, "dwell range must be finite, non-negative and ordered");
        }

        var rng = new ScenarioRandom(seed, 0x56414E0000UL + (ulong)vanIndex);
        var chosen = new HashSet<int>();
        var pending = new List<(int Edge, double Fraction, double DwellS)>();
        while (pending.Count < stopCount)
        {
            int edge = rng.NextInt(edgeCount);
            double fraction = rng.NextUniform(0.25, 0.75);
            double dwell = rng.NextUniform(minDwellS, maxDwellS);
            if (chosen.Add(edge))
            {
                pending.Add((edge, fraction, dwell));
            }
        }

        var waypoints = new List<RouteWaypoint> { new(0.0, 0.0) };
        var stops = new List<DeliveryStop>();
        int col = 0, row = 0, dir = NoDirection;
        while (pending.Count > 0)
        {
            int next = 0;
            double best = double.PositiveInfinity;
            for (int i = 0; i < pending.Count; i++)
            {
                EdgePoint(pending[i].Edge, pending[i].Fraction, out double e, out double n);
                double d = Math.Abs(e - (col * BlockM)) + Math.Abs(n - (row * BlockM));
                if (d < best)
                {
                    best = d;
                    next = i;
                }
            }

            (int edgeIndex, double frac, double dwellS) = pending[next];
            pending.RemoveAt(next);
            EdgeEnds(edgeIndex, out int c0, out int r0, out int c1, out int r1);
            List<(int Col, int Row, int Dir)> path = ShortestPath(col, row, dir, (c, r, d) =>
                (c == c0 && r == r0 && !Reverses(d, Direction(c0, r0, c1, r1))) || (c == c1 && r == r1 && !Reverses(d, Direction(c1, r1, c0, r0))));
            AppendNodes(waypoints, path);
            (col, row, _) = path[^1];
            bool forward = col == c0 && row == r0;
            int endCol = forward ? c1 : c0, endRow = forward ? r1 : r0;
            double along = forward ? frac : 1.0 - frac;
            double stopE = (col + ((endCol - col) * along)) * BlockM;
            double stopN = (row + ((endRow - row) * along)) * BlockM;
            waypoints.Add(new RouteWaypoint(stopE, stopN, dwellS));
            stops.Add(new DeliveryStop(Address(edgeIndex, frac), stopE, stopN, dwellS));
            dir = Direction(col, row, endCol, endRow);
            col = endCol;
            row = endRow;
            waypoints.Add(new RouteWaypoint(col * BlockM, row * BlockM));
        }

        List<(int Col, int Row, int Dir)> home = ShortestPath(col, row, dir, (c, r, _) => c == 0 && r == 0);
        AppendNodes(waypoints, home);
        return new DeliveryRound(this, vanIndex, seed, [.. stops], [.. waypoints]);
    }

    private static int CheckIndex(int index, int count)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(index);
        ArgumentOutOfRangeException.ThrowIfGreaterThanOrEqual(index, count);
        return index;
    }

    private static bool Reverses(int incoming, int outgoing) => incoming != NoDirection && ((incoming + 2) % 4) == outgoing;

    private static int Direction(int c0, int r0, int c1, int r1) => c1 > c0 ? 0 : r1 > r0 ? 1 : c1 < c0 ? 2 : 3;

    private void AppendNodes(List<RouteWaypoint> waypoints, List<(int Col, int Row, int Dir)> path)
    {
        // The first path node is where the van already is.
        for (int i = 1; i < path.Count; i++)
        {
            waypoints.Add(new RouteWaypoint(path[i].Col * BlockM, path[i].Row * BlockM));
        }
    }

    // Horizontal edges first: index = row * (LaneCount - 1) + col joins (col, row)-(col + 1, row);
    // then vertical edges: index = H + row * LaneCount + col joins (col, row)-(col, row + 1).
    private void EdgeEnds(int edge, out int c0, out int r0, out int c1, out int r1)
    {
        int horizontal = (LaneCount - 1) * StreetCount;
        if (edge < horizontal)
        {
            r0 = r1 = edge / (LaneCount - 1);
            c0 = edge % (LaneCount - 1);
            c1 = c0 + 1;
            return;
        }

        int v = edge - horizontal;
        c0 = c1 = v % LaneCount;
        r0 = v / LaneCount;
        r1 = r0 + 1;
    }

    private void EdgePoint(int edge, double fraction, out double eastM, out double northM)
    {
        EdgeEnds(edge, out int c0, out int r0, out int c1, out int r1);
        eastM = (c0 + ((c1 - c0) * fraction)) * BlockM;
        northM = (r0 + ((r1 - r0) * fraction)) * BlockM;
    }

    private string Address(int edge, double fraction)
    {
        EdgeEnds(edge, out int c0, out int r0, out int c1, out int _);
        bool horizontal = c1 != c0;
        int block = horizontal ? c0 : r0;
        int number = (100 * (block + 1)) + (2 * (int)Math.Round(fraction * 48.0));
        string name = horizontal ? StreetName(r0) : LaneName(c0);
        return string.Create(CultureInfo.InvariantCulture, $"{number} {name}");
    }

    // Breadth-first search over (intersection, incoming direction) states, never reversing direction.
    private List<(int Col, int Row, int Dir)> ShortestPath(int col, int row, int dir, Func<int, int, int, bool> isGoal)
    {
        int states = LaneCount * StreetCount * 5;
        var previous = new int[states];
        Array.Fill(previous, -2);
        int Encode(int c, int r, int d) => (((r * LaneCount) + c) * 5) + d;
        var queue = new Queue<int>();
        int start = Encode(col, row, dir);
        previous[start] = -1;
        queue.Enqueue(start);
        while (queue.Count > 0)
        {
            int s = queue.Dequeue();
            int d = s % 5, cell = s / 5, c = cell % LaneCount, r = cell / LaneCount;
            if (isGoal(c, r, d))
            {
                var path = new List<(int Col, int Row, int Dir)>();
                for (int x = s; x >= 0; x = previous[x])
                {
                    int xc = (x / 5) % LaneCount, xr = (x / 5) / LaneCount;
                    path.Add((xc, xr, x % 5));
                }

                path.Reverse();
                return path;
            }

            for (int nd = 0; nd < 4; nd++)
            {
                int nc = c + StepColumn[nd], nr = r + StepRow[nd];
                if (nc < 0 || nr < 0 || nc >= LaneCount || nr >= StreetCount || Reverses(d, nd))
                {
                    continue;
                }

                int ns = Encode(nc, nr, nd);
                if (previous[ns] == -2)
                {
                    previous[ns] = s;
                    queue.Enqueue(ns);
                }
            }
        }

        throw new InvalidOperationException("no U-turn-free path found on the grid");
    }
}
