using FusionService.Scenarios;

namespace FusionService.Estimation.Tests.Scenarios;

public class DeliveryNetworkTests
{
    private static readonly DeliveryNetwork Town = new();

    [Theory]
    [InlineData(0, 6)]
    [InlineData(1, 10)]
    [InlineData(4, 1)]
    public void Round_leaves_and_returns_to_the_depot_through_streets_without_u_turns(int van, int stopCount)
    {
        DeliveryRound round = Town.PlanRound(van, stopCount, seed: 31);
        Assert.Equal(stopCount, round.Stops.Count);
        Assert.Equal(stopCount, round.Waypoints.Count(w => w.DwellS > 0));
        RouteWaypoint first = round.Waypoints[0], last = round.Waypoints[^1];
        Assert.Equal((0.0, 0.0), (first.EastM, first.NorthM));
        Assert.Equal((0.0, 0.0), (last.EastM, last.NorthM));
        double maxE = (Town.LaneCount - 1) * Town.BlockM, maxN = (Town.StreetCount - 1) * Town.BlockM;
        foreach (RouteWaypoint w in round.Waypoints)
        {
            AssertNear.Within(0, maxE, w.EastM, 1e-9, "waypoint east (m)");
            AssertNear.Within(0, maxN, w.NorthM, 1e-9, "waypoint north (m)");
            bool onLane = Math.Abs(Math.IEEERemainder(w.EastM, Town.BlockM)) < 1e-6;
            bool onStreet = Math.Abs(Math.IEEERemainder(w.NorthM, Town.BlockM)) < 1e-6;
            Assert.True(onLane || onStreet, $"waypoint {w} is off the street grid");
        }

        for (int i = 1; i + 1 < round.Waypoints.Count; i++)
        {
            RouteWaypoint a = round.Waypoints[i - 1], b = round.Waypoints[i], c = round.Waypoints[i + 1];
            double ux = b.EastM - a.EastM, uy = b.NorthM - a.NorthM, vx = c.EastM - b.EastM, vy = c.NorthM - b.NorthM;
            double lu = Math.Sqrt((ux * ux) + (uy * uy)), lv = Math.Sqrt((vx * vx) + (vy * vy));
            Assert.True(lu >= 1.0 && lv >= 1.0, "zero-length leg");
            Assert.True(((ux * vx) + (uy * vy)) / (lu * lv) > -0.5, $"U-turn at waypoint {i}");
        }
    }

    [Fact]
    public void Stops_are_mid_block_with_dwell_in_range_and_invented_addresses()
    {
        DeliveryRound round = Town.PlanRound(2, 8, seed: 77, minDwellS: 120, maxDwellS: 300);
        var names = Enumerable.Range(0, Town.LaneCount).Select(Town.LaneName)
            .Concat(Enumerable.Range(0, Town.StreetCount).Select(Town.StreetName)).ToList();
        foreach (DeliveryStop stop in round.Stops)
        {
            AssertNear.Within(120, 300, stop.DwellS, 0.0, "dwell (s)");
            bool onLane = Math.Abs(Math.IEEERemainder(stop.EastM, Town.BlockM)) < 1e-6;
            double along = onLane ? stop.NorthM : stop.EastM;
            double fraction = along / Town.BlockM - Math.Floor(along / Town.BlockM);
            AssertNear.Within(0.25, 0.75, fraction, 1e-9, "fraction along the block");
            Assert.Contains(names, n => stop.Address.EndsWith(n, StringComparison.Ordinal));
        }

        Assert.Equal(round.Stops.Count, round.Stops.Select(s => (s.EastM, s.NorthM)).Distinct().Count());
    }

    [Fact]
    public void Rounds_are_reproducible_per_seed_and_differ_between_vans()
    {
        Assert.Equal(Town.PlanRound(3, 5, 1).Waypoints, Town.PlanRound(3, 5, 1).Waypoints);
        Assert.NotEqual(Town.PlanRound(3, 5, 1).Waypoints, Town.PlanRound(4, 5, 1).Waypoints);
        Assert.NotEqual(Town.PlanRound(3, 5, 1).Waypoints, Town.PlanRound(3, 5, 2).Waypoints);
    }

    [Fact]
    public void A_planned_round_can_be_driven()
    {
        DeliveryRound round = Town.PlanRound(0, 3, seed: 13, minDwellS: 60, maxDwellS: 60);
        TruthTrajectory truth = round.Drive();
        Assert.Equal(3, truth.StopIntervals.Count);
        Assert.Equal(Town.OriginLatitudeDeg, truth.OriginLatitudeDeg);
        Assert.True(truth.EndTimeUs - truth.StartTimeUs > 180_000_000);
    }
}
