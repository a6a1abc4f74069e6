// Named, seeded scenarios with realistic GNSS error: clean sky, multipath, outage, tow, long park.
namespace FusionService.Scenarios;

/// <summary>
/// Seeded, reproducible scenarios of realistic GNSS behaviour for consistency tests and Monte Carlo benchmarks
/// (issue 12). Every drive is a delivery round of the demo town (<see cref="DeliveryNetwork"/>) of about half an hour
/// sampled at 100 Hz, measured by <see cref="ConsumerReceiver"/> (GNSS 1 Hz, wheel and IMU 10 Hz); the park is a 3 h
/// standstill sampled at 1 Hz. The seed chooses the round and the noise; all values are invented demo settings.
/// Vary a scenario with <c>with</c>, e.g. <c>drive with { Suite = drive.Suite with { GnssCorrelationTauS = 120 } }</c>.
/// </summary>
public static class RealisticDrives
{
    private const int RoundStops = 8;
    private const double MinDwellS = 60.0;
    private const double MaxDwellS = 180.0;

    /// <summary>
    /// A consumer receiver: 3 m per-axis total position error (also the reported accuracy) of which 75 % of the variance is
    /// correlated with τ = 60 s, course rounded to 0.1° (so an occasional 360.0), other sensors at the suite defaults.
    /// </summary>
    public static SensorSuite ConsumerReceiver { get; } = new()
    {
        GnssSigmaM = 3.0,
        GnssCorrelatedVarianceFraction = 0.75,
        GnssCorrelationTauS = 60.0,
        GnssCourseResolutionDeg = 0.1,
    };

    /// <summary>Multipath of 15-60 m for 5-40 s, gaps of mean 45 s: episodes cover about a third of the time.</summary>
    public static MultipathProcess ThirdOfTheTimeMultipath { get; } = new() { MeanGapS = 45.0 };

    /// <summary>Clean sky: the round with <see cref="ConsumerReceiver"/> and nothing else.</summary>
    /// <param name="seed">Seed of the round and the noise.</param>
    public static RealisticDrive CleanSky(int seed = 1201) => new("clean-sky", Round(seed), ConsumerReceiver, seed);

    /// <summary>Multipath episodes (<see cref="ThirdOfTheTimeMultipath"/>) over about a third of the round.</summary>
    /// <param name="seed">Seed of the round, the episodes and the noise.</param>
    public static RealisticDrive Multipath(int seed = 1202) =>
        new("multipath", Round(seed), ConsumerReceiver with { GnssRandomMultipath = ThirdOfTheTimeMultipath }, seed);

    /// <summary>A 180 s GNSS outage (no position, no velocity) starting at the first moment after 40 % of the round at which the van drives faster than 5 m/s.</summary>
    /// <param name="seed">Seed of the round and the noise.</param>
    public static RealisticDrive Outage(int seed = 1203)
    {
        TruthTrajectory truth = Round(seed);
        long from = truth.StartTimeUs + (long)(0.4 * (truth.EndTimeUs - truth.StartTimeUs));
        TruthSample start = truth.Samples.First(s => s.TimeUs >= from && s.SpeedMps > 5.0);
        return new("outage", truth, ConsumerReceiver with { GnssOutages = [TimeInterval.FromDuration(start.TimeUs, 180.0)] }, seed);
    }

    /// <summary>
    /// A tow: the round, 120 s parked at its end, then the van carried 2.5 km along its heading at 4 m/s (ramps of
    /// 0.5 m/s²; <see cref="SensorSuite.CarriedSpans"/> holds that span: wheel exactly 0, gyro bias and noise only), then
    /// driven on 300 m ahead and 400 m to the left.
    /// </summary>
    /// <param name="seed">Seed of the round and the noise.</param>
    public static RealisticDrive Tow(int seed = 1204)
    {
        var options = new RouteDriverOptions();
        TruthTrajectory round = new DeliveryNetwork().PlanRound(0, RoundStops / 2, seed, MinDwellS, MaxDwellS).Drive(options);
        long period = round.SamplePeriodUs;
        TruthSample end = round.Samples[^1];
        TruthTrajectory park = RouteDriver.Park(end.EastM, end.NorthM, end.HeadingRad, 120.0, options with { StartTimeUs = round.EndTimeUs + period });
        TruthSample[] carried = TruthAssembly.Carry(park.Samples[^1], 2500.0, 4.0, 0.5, park.EndTimeUs + period, period);
        TruthSample setDown = carried[^1];
        double c = Math.Cos(setDown.HeadingRad), s = Math.Sin(setDown.HeadingRad);
        RouteWaypoint[] onward =
        [
            new(setDown.EastM, setDown.NorthM),
            new(setDown.EastM + (300.0 * c), setDown.NorthM + (300.0 * s)),
            new(setDown.EastM + (300.0 * c) - (400.0 * s), setDown.NorthM + (300.0 * s) + (400.0 * c)),
        ];
        TruthTrajectory driveOn = RouteDriver.Drive(onward, options with { StartTimeUs = carried[^1].TimeUs + period }, seed);
        TruthTrajectory truth = TruthAssembly.Join(round.OriginLatitudeDeg, round.OriginLongitudeDeg,
        [
            (round.Samples, round.StopIntervals),
            (park.Samples, park.StopIntervals),
            (carried, []),
            (driveOn.Samples, driveOn.StopIntervals),
        ]);
        var carriedSpan = new TimeInterval(carried[0].TimeUs, carried[^1].TimeUs + period);
        return new("tow", truth, ConsumerReceiver with { CarriedSpans = [carriedSpan] }, seed);
    }

    /// <summary>
    /// A van parked for 3 h beside a building (truth sampled at 1 Hz): correlated error as in <see cref="ConsumerReceiver"/>
    /// plus multipath episodes of 15-60 m for 5-40 s with gaps of mean 300 s (about 7 % of the time); GNSS speed is noise
    /// about 0, wheel speed exactly 0.
    /// </summary>
    /// <param name="seed">Seed of the episodes and the noise.</param>
    public static RealisticDrive ParkBesideBuilding(int seed = 1205)
    {
        TruthTrajectory truth = RouteDriver.Park(120.0, 240.0, 0.3, 3.0 * 3600.0, new RouteDriverOptions { SamplePeriodUs = 1_000_000 });
        return new("park-3h", truth, ConsumerReceiver with { GnssRandomMultipath = new MultipathProcess { MeanGapS = 300.0 } }, seed);
    }

    /// <summary>
    /// Clean sky with a receiver that reports only HDOP 0.8: the accuracy the service derives with UERE 5 m is
    /// 0.8 x 5 / sqrt(2) = 2.83 m per axis against a true 3 m (slightly optimistic).
    /// </summary>
    /// <param name="seed">Seed of the round and the noise.</param>
    public static RealisticDrive HdopOnly(int seed = 1206) =>
        new("hdop-only", Round(seed), ConsumerReceiver with { GnssReportedHdop = 0.8, GnssUereM = 5.0 }, seed);

    /// <summary>Every scenario above, in the order listed, each with its default seed plus <paramref name="seedOffset"/>.</summary>
    /// <param name="seedOffset">Added to each default seed (a Monte Carlo run index, say).</param>
    public static IReadOnlyList<RealisticDrive> All(int seedOffset = 0) =>
    [
        CleanSky(1201 + seedOffset),
        Multipath(1202 + seedOffset),
        Outage(1203 + seedOffset),
        Tow(1204 + seedOffset),
        ParkBesideBuilding(1205 + seedOffset),
        HdopOnly(1206 + seedOffset),
    ];

    private static TruthTrajectory Round(int seed) => new DeliveryNetwork().PlanRound(0, RoundStops, seed, MinDwellS, MaxDwellS).Drive();
}
