// GNSS outages: gaps between fixes longer than the threshold while the vehicle moved (issue 4, diagnostics).
using FusionService.Estimation.Diagnostics;

namespace FusionService.Estimation.Tests.Diagnostics;

public sealed class GnssOutageDetectorTests
{
    private const long S = 1_000_000;

    /// <summary>Hand-made cases (invented times): a 7 s gap while driving is one outage of 7 s; gaps of exactly 5 s are not.</summary>
    [Fact]
    public void Issue4_a_gap_longer_than_the_threshold_while_moving_is_an_outage()
    {
        long[] fixes = [0, 1 * S, 2 * S, 9 * S, 10 * S, 15 * S];
        long[] motion = [0, 3 * S, 6 * S, 12 * S];
        double[] speeds = [8.0, 8.0, 7.5, 6.0];
        var outages = GnssOutageDetector.Find(fixes, motion, speeds, 5.0, 1.0);
        Assert.Equal([new GnssOutage(2 * S, 9 * S)], outages);
        AssertNear.Equal(7.0, outages[0].DurationS, 1e-12, "outage duration (s)");
    }

    [Fact]
    public void Issue4_a_parked_vehicle_or_one_without_motion_samples_has_no_outage()
    {
        long[] fixes = [0, 60 * S];
        Assert.Empty(GnssOutageDetector.Find(fixes, [10 * S, 30 * S], [0.0, 0.3], 5.0, 1.0));
        Assert.Empty(GnssOutageDetector.Find(fixes, [], [], 5.0, 1.0));
        Assert.Empty(GnssOutageDetector.Find(fixes, [30 * S], [double.NaN], 5.0, 1.0));
        Assert.Single(GnssOutageDetector.Find(fixes, [30 * S], [-2.0], 5.0, 1.0));
    }

    [Fact]
    public void Issue4_degenerate_input_is_refused_or_empty()
    {
        Assert.Empty(GnssOutageDetector.Find([], [], [], 5.0, 1.0));
        Assert.Empty(GnssOutageDetector.Find([3 * S], [3 * S], [9.0], 5.0, 1.0));
        Assert.Throws<ArgumentException>(() => GnssOutageDetector.Find([9 * S, 0], [], [], 5.0, 1.0));
        Assert.Throws<ArgumentException>(() => GnssOutageDetector.Find([0, 9 * S], [1 * S], [], 5.0, 1.0));
        Assert.Throws<ArgumentOutOfRangeException>(() => GnssOutageDetector.Find([0, 9 * S], [], [], 0.0, 1.0));
        Assert.Throws<ArgumentOutOfRangeException>(() => GnssOutageDetector.Find([0, 9 * S], [], [], 5.0, double.NaN));
    }
}
