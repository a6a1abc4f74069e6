// Drives a van along a route of straight legs and rounded corners, within delivery-van limits.
using FusionService.Estimation.Geodesy;

namespace FusionService.Scenarios;

/// <summary>
/// Generates the true motion of a van driving a route of waypoints: straight legs joined by circular arcs, a cruise
/// speed, acceleration and braking rate drawn per leg from the configured ranges, corners slowed to the lateral
/// acceleration and yaw-rate limits, and stops of the configured durations. Deterministic for a given seed.
/// </summary>
/// <remarks>
/// The speed profile is computed over arc length s on a grid of at most 0.25 m: v²(s) is the largest profile under
/// the speed limits (zero at every stop) reachable with the per-leg acceleration and braking rates (a forward and a
/// backward pass, the classic time-optimal profile under piecewise-constant limits). Between grid nodes v² is linear
/// in s, i.e. the acceleration is constant, so time follows exactly: a cell of length Δs takes 2 Δs / (v₀ + v₁).
/// Hence |acceleration|, lateral acceleration v² |κ| and yaw rate v κ stay within the limits at every instant, not
/// only at the samples. Curvature steps at the ends of corner arcs (no transition spirals), so the yaw rate steps
/// there. While stopped, speed, yaw rate and acceleration are exactly 0.
/// </remarks>
public static class RouteDriver
{
    private const double MaxCellM = 0.25;
    private const ulong LegStream = 0x524F555445UL;

    /// <summary>Drives <paramref name="route"/> from rest to rest and samples the truth at the configured period.</summary>
    /// <param name="route">At least two waypoints, consecutive ones at least 1 m apart, no U-turns (turn above 179 degrees).</param>
    /// <param name="options">Limits, style, start time, sample period and frame origin.</param>
    /// <param name="seed">Seed of the per-leg speed, acceleration and braking draws.</param>
    /// <returns>The trajectory, with one <see cref="TruthTrajectory.StopIntervals"/> entry per waypoint with a dwell.</returns>
    public static TruthTrajectory Drive(IReadOnlyList<RouteWaypoint> route, RouteDriverOptions options, int seed)
    {
        ArgumentNullException.ThrowIfNull(route);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        if (route.Count < 2)
        {
            throw new ArgumentException("a route needs at least two waypoints", nameof(route));
        }

        foreach (RouteWaypoint w in route)
        {
            if (!double.IsFinite(w.EastM) || !double.IsFinite(w.NorthM) || !double.IsFinite(w.DwellS) || w.DwellS < 0)
            {
                throw new ArgumentException($"waypoint {w} must have finite coordinates and a non-negative dwell", nameof(route));
            }
        }

        RoutePath path = RoutePath.Build(route, options.CornerRadiusM);
        int legs = route.Count - 1;
        var rng = new ScenarioRandom(seed, LegStream);
        var cruiseMps = new double[legs];
        var accelMps2 = new double[legs];
        var brakeMps2 = new double[legs];
        for (int j = 0; j < legs; j++)
        {
            cruiseMps[j] = rng.NextUniform(options.CruiseSpeedMinMps, options.CruiseSpeedMaxMps);
            accelMps2[j] = rng.NextUniform(options.AccelMinMps2, options.AccelMaxMps2);
            brakeMps2[j] = rng.NextUniform(options.BrakeMinMps2, options.BrakeMaxMps2);
        }

        SpeedGrid grid = BuildGrid(path, route, options, cruiseMps, accelMps2, brakeMps2);
        return Sample(path, grid, options);
    }

    /// <summary>A van parked for <paramref name="durationS"/> seconds: every sample at rest at the given pose.</summary>
    /// <param name="eastM">East from the origin, metres.</param>
    /// <param name="northM">North from the origin, metres.</param>
    /// <param name="headingRad">Heading, radians from east, counter-clockwise (wrapped to (-π, π]).</param>
    /// <param name="durationS">Duration, seconds, at least one sample period.</param>
    /// <param name="options">Start time, sample period and frame origin (the driving limits are not used).</param>
    public static TruthTrajectory Park(double eastM, double northM, double headingRad, double durationS, RouteDriverOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        if (!double.IsFinite(eastM) || !double.IsFinite(northM) || !double.IsFinite(headingRad))
        {
            throw new ArgumentException("the parked pose must be finite");
        }

        long durationUs = (long)Math.Round(durationS * 1e6);
        if (!double.IsFinite(durationS) || durationUs < options.SamplePeriodUs)
        {
            throw new ArgumentOutOfRangeException(nameof(durationS), durationS, "a parked span must last at least one sample period");
        }

        int count = checked((int)(durationUs / options.SamplePeriodUs) + 1);
        var samples = new TruthSample[count];
        double heading = Angles.WrapPi(headingRad);
        for (int k = 0; k < count; k++)
        {
            samples[k] = new TruthSample(options.StartTimeUs + (k * options.SamplePeriodUs), eastM, northM, heading, 0.0, 0.0, 0.0);
        }

        var stop = new TimeInterval(samples[0].TimeUs, samples[^1].TimeUs + 1);
        return new TruthTrajectory(options.OriginLatitudeDeg, options.OriginLongitudeDeg, samples, null, [stop]);
    }

    private static SpeedGrid BuildGrid(
        RoutePath path, IReadOnlyList<RouteWaypoint> route, RouteDriverOptions options, double[] cruiseMps, double[] accelMps2, double[] brakeMps2)
    {
        PathSegment[] segments = path.Segments;
        var stations = new List<double>();
        var limit2 = new List<double>();
        var cellSegment = new List<int>();
        var segmentFirstNode = new int[segments.Length + 1];
        var segmentCells = new int[segments.Length];
        var segmentLimitMps = new double[segments.Length];
        for (int g = 0; g < segments.Length; g++)
        {
            PathSegment seg = segments[g];
            double lim = seg.Sign == 0
                ? cruiseMps[seg.LegIndex]
                : Math.Min(
                    Math.Min(cruiseMps[seg.CornerIndex - 1], cruiseMps[seg.CornerIndex]),
                    Math.Min(Math.Sqrt(options.MaxLateralAccelMps2 * seg.RadiusM), options.MaxYawRateRps * seg.RadiusM));
            segmentLimitMps[g] = lim;
            int cells = Math.Max(1, (int)Math.Ceiling(seg.LengthM / MaxCellM));
            if (seg.Sign != 0 && cells % 2 == 1)
            {
                cells++;
            }

            segmentCells[g] = cells;
            segmentFirstNode[g] = stations.Count;
            for (int k = 0; k < cells; k++)
            {
                stations.Add(seg.StartStationM + (seg.LengthM * k / cells));
                double l2 = lim * lim;
                if (k == 0 && g > 0)
                {
                    l2 = Math.Min(l2, segmentLimitMps[g - 1] * segmentLimitMps[g - 1]);
                }

                limit2.Add(l2);
                cellSegment.Add(g);
            }
        }

        segmentFirstNode[segments.Length] = stations.Count;
        stations.Add(path.LengthM);
        limit2.Add(0.0);
        limit2[0] = 0.0;

        int nodeCount = stations.Count;
        var dwellS = new double[nodeCount];
        for (int i = 0; i < route.Count; i++)
        {
            int seg = path.WaypointSegment[i];
            int node = path.WaypointAtArcMiddle[i] ? segmentFirstNode[seg] + (segmentCells[seg] / 2) : segmentFirstNode[seg];
            if (i == 0)
            {
                node = 0;
            }

            if (route[i].DwellS > 0)
            {
                limit2[node] = 0.0;
                dwellS[node] += route[i].DwellS;
            }
        }

        var v2 = new double[nodeCount];
        for (int k = 0; k + 1 < nodeCount; k++)
        {
            double ds = stations[k + 1] - stations[k];
            int leg = RateLeg(segments[cellSegment[k]], accelerating: true);
            v2[k + 1] = Math.Min(limit2[k + 1], v2[k] + (2.0 * accelMps2[leg] * ds));
        }

        for (int k = nodeCount - 2; k >= 0; k--)
        {
            double ds = stations[k + 1] - stations[k];
            int leg = RateLeg(segments[cellSegment[k]], accelerating: false);
            v2[k] = Math.Min(v2[k], v2[k + 1] + (2.0 * brakeMps2[leg] * ds));
        }

        return new SpeedGrid([.. stations], v2, dwellS, [.. cellSegment]);
    }

    // Corners accelerate out at the next leg's rate and brake in at the previous leg's rate.
    private static int RateLeg(PathSegment seg, bool accelerating) =>
        seg.Sign == 0 ? seg.LegIndex : (accelerating ? seg.CornerIndex : seg.CornerIndex - 1);

    private static TruthTrajectory Sample(RoutePath path, SpeedGrid grid, RouteDriverOptions options)
    {
        int nodes = grid.StationsM.Length;
        var speed = new double[nodes];
        var arriveS = new double[nodes];
        var departS = new double[nodes];
        var arriveUs = new long[nodes];
        var departUs = new long[nodes];
        for (int k = 0; k < nodes; k++)
        {
            speed[k] = Math.Sqrt(grid.Speed2[k]);
        }

        var stops = new List<TimeInterval>();
        for (int k = 0; k < nodes; k++)
        {
            if (k > 0)
            {
                double ds = grid.StationsM[k] - grid.StationsM[k - 1];
                double mean = speed[k - 1] + speed[k];
                if (!(mean > 0.0))
                {
                    throw new ArgumentException("two stops lie within one profile cell; move them apart");
                }

                arriveS[k] = departS[k - 1] + (2.0 * ds / mean);
            }

            departS[k] = arriveS[k] + grid.DwellS[k];
            arriveUs[k] = (long)Math.Ceiling(arriveS[k] * 1e6);
            departUs[k] = (long)Math.Floor(departS[k] * 1e6);
            if (grid.DwellS[k] > 0 && departUs[k] > arriveUs[k])
            {
                stops.Add(new TimeInterval(options.StartTimeUs + arriveUs[k], options.StartTimeUs + departUs[k]));
            }
        }

        double totalS = departS[^1];
        long periodUs = options.SamplePeriodUs;
        // The last sample is at or after the end of the route (within a rounding hundredth of a microsecond) and at rest.
        long count = (long)Math.Ceiling((totalS * 1e6 / periodUs) - 1e-6) + 1;
        if (count > int.MaxValue / 2)
        {
            throw new ArgumentException("route too long for the sample period");
        }

        var samples = new TruthSample[count];
        int j = 0;
        for (long n = 0; n < count; n++)
        {
            long offsetUs = n * periodUs;
            double t = offsetUs / 1e6;
            while (j + 1 < nodes && (t >= arriveS[j + 1] || (grid.DwellS[j + 1] > 0 && offsetUs >= arriveUs[j + 1])))
            {
                j++;
            }

            if (n == count - 1)
            {
                j = nodes - 1;
            }

            long timeUs = options.StartTimeUs + offsetUs;
            int cellSeg = grid.CellSegment[Math.Min(j, nodes - 2)];

            bool stopped = j == nodes - 1 || (grid.DwellS[j] > 0 && (t < departS[j] || offsetUs < departUs[j]));
            if (stopped)
            {
                path.Evaluate(cellSeg, grid.StationsM[j], out double e0, out double n0, out double h0);
                samples[n] = new TruthSample(timeUs, e0, n0, h0, 0.0, 0.0, 0.0);
                continue;
            }

            double cellS = arriveS[j + 1] - departS[j];
            double tau = Math.Clamp(t - departS[j], 0.0, cellS);
            double dsCell = grid.StationsM[j + 1] - grid.StationsM[j];
            double a = (grid.Speed2[j + 1] - grid.Speed2[j]) / (2.0 * dsCell);
            double v = Math.Clamp(speed[j] + (a * tau), Math.Min(speed[j], speed[j + 1]), Math.Max(speed[j], speed[j + 1]));
            double s = Math.Clamp(grid.StationsM[j] + (speed[j] * tau) + (0.5 * a * tau * tau), grid.StationsM[j], grid.StationsM[j + 1]);
            path.Evaluate(cellSeg, s, out double e, out double nn, out double h);
            samples[n] = new TruthSample(timeUs, e, nn, h, v, v * path.Segments[cellSeg].CurvaturePerM, a);
        }

        return new TruthTrajectory(options.OriginLatitudeDeg, options.OriginLongitudeDeg, samples, null, stops);
    }

    private sealed record SpeedGrid(double[] StationsM, double[] Speed2, double[] DwellS, int[] CellSegment);
}
