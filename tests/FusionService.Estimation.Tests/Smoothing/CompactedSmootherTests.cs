using System.Globalization;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Smoothing;

/// <summary>
/// The bounded-memory smoother (<see cref="CompactingStepRecorder"/> + <see cref="CompactedRauchTungStriebelSmoother"/>)
/// against the full-step extended RTS smoother (<see cref="TrackReplay"/>, Rauch, Tung and Striebel 1965) on the same
/// forward pass: the compaction is an algebraic rearrangement (derived in the recorder's remarks), so the two agree to
/// round-off at every recorded instant. Data: an invented delivery round with 1 % GNSS jumps (gated steps included).
/// </summary>
public sealed class CompactedSmootherTests(ITestOutputHelper output)
{
    private const int N = StateMatrix.Size;

    private static readonly Lazy<(ScenarioRun Run, Measurement[] All)> Round = new(() =>
    {
        TruthTrajectory truth = new DeliveryNetwork().PlanRound(1, stopCount: 5, seed: 4242, minDwellS: 20, maxDwellS: 60).Drive();
        var suite = SensorSuite.ForProfile(NoiseProfile.DeliveryVan) with { OutlierProbability = 0.01 };
        ScenarioRun run = MeasurementGenerator.Generate(truth, suite, seed: 77);
        return (run, [.. run.Measurements]);
    });

    private static TrackProcessor Processor { get; } = new(new TrackOptions(), NoiseProfile.DeliveryVan);

    /// <summary>
    /// The recorder folds a step by its updates' factors unless something other than an update changed the posterior
    /// (then through the predicted covariance's inverse); the equality above covers both only if the round has both.
    /// </summary>
    [Fact]
    public void The_round_has_steps_for_both_ways_of_folding()
    {
        var counting = new CountingRecorder(new CompactingStepRecorder(1_000_000));
        TrackState state = TrackState.Empty;
        foreach (Measurement m in Round.Value.All)
        {
            if (state.Phase != TrackPhase.Running || m.TimeUs >= state.TimeUs)
            {
                Processor.Process(ref state, m, counting);
            }
        }

        output.WriteLine($"{counting.Posteriors} posteriors, {counting.Updates} updates, {counting.Adjustments} adjusted");
        Assert.True(counting.Updates > counting.Posteriors / 2, "most steps should be plain updates");
        Assert.True(counting.Adjustments > 0, "the round should have a step adjusted other than by an update");
    }

    [Theory]
    [InlineData(0L)]
    [InlineData(1_000_000L)]
    [InlineData(5_000_000L)]
    public void Compacted_smoother_equals_the_full_step_smoother_at_recorded_instants(long intervalUs)
    {
        var all = Round.Value.All;
        ReplayResult full = TrackReplay.Run(Processor, TrackState.Empty, all);
        var compacted = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, intervalUs);
        Assert.Equal(full.Smoothed.Count, compacted.Count);
        int compared = 0;
        double worstPositionM = 0, worstHeadingRad = 0, worstSpeedMps = 0, worstVarM2 = 0;
        for (int s = 0; s < compacted.Count; s++)
        {
            SmoothedSegment c = compacted[s], f = full.Smoothed[s];
            var lastIndexAt = new Dictionary<long, int>();
            for (int k = 0; k < f.Count; k++)
            {
                lastIndexAt[f.TimesUs[k]] = k;
            }

            Assert.Equal(f.TimesUs[0], c.TimesUs[0]);
            Assert.Equal(f.TimesUs[^1], c.TimesUs[^1]);
            for (int k = 0; k < c.Count; k++)
            {
                if (k > 0)
                {
                    Assert.True(c.TimesUs[k] >= c.TimesUs[k - 1], "recorded instants out of order");
                }

                // The segment's first and last instants are kept whatever the spacing; the ones between honour it.
                if (k >= 2 && k <= c.Count - 2)
                {
                    Assert.True(c.TimesUs[k] - c.TimesUs[k - 1] >= intervalUs, "recorded instants closer than the interval");
                }

                int j = lastIndexAt[c.TimesUs[k]];
                string at = string.Create(CultureInfo.InvariantCulture, $" at instant {k} of segment {s}");
                StateVector x = c.Means[k], y = f.Means[j];
                StateMatrix p = c.Covariances[k], q = f.Covariances[j];

                // Tolerances: 1 µm of position, 1 nrad of heading, 1 µm/s of speed, 1e-9 m² of position variance (derived:
                // the two are the same algebra, so only round-off may differ).
                AssertNear.Equal(y[EastM], x[EastM], 1e-6, "smoothed east (m)" + at);
                AssertNear.Equal(y[NorthM], x[NorthM], 1e-6, "smoothed north (m)" + at);
                AssertNear.EqualAngle(y[HeadingRad], x[HeadingRad], 1e-9, "smoothed heading (rad)" + at);
                AssertNear.Equal(y[SpeedMps], x[SpeedMps], 1e-6, "smoothed speed (m/s)" + at);
                AssertNear.Equal(y[YawRateRps], x[YawRateRps], 1e-9, "smoothed yaw rate (rad/s)" + at);
                AssertNear.Equal(y[AccelMps2], x[AccelMps2], 1e-6, "smoothed acceleration (m/s²)" + at);
                AssertNear.Equal(y[GyroBiasRps], x[GyroBiasRps], 1e-10, "smoothed gyro bias (rad/s)" + at);
                AssertNear.Equal(y[WheelScale], x[WheelScale], 1e-9, "smoothed wheel scale" + at);
                AssertNear.Equal(q[0], p[0], 1e-9, "smoothed east variance (m²)" + at);
                AssertNear.Equal(q[N + 1], p[N + 1], 1e-9, "smoothed north variance (m²)" + at);
                AssertNear.Equal(q[1], p[1], 1e-9, "smoothed east-north covariance (m²)" + at);
                AssertNear.Equal(q[(SpeedMps * N) + SpeedMps], p[(SpeedMps * N) + SpeedMps], 1e-12, "smoothed speed variance (m²/s²)" + at);
                AssertSymmetricPositiveDefinite(p, at);
                Assert.InRange(x[HeadingRad], -Math.PI, Math.PI);
                worstPositionM = Math.Max(worstPositionM, Math.Max(Math.Abs(x[EastM] - y[EastM]), Math.Abs(x[NorthM] - y[NorthM])));
                worstHeadingRad = Math.Max(worstHeadingRad, Math.Abs(FusionService.Estimation.Geodesy.Angles.WrapPi(x[HeadingRad] - y[HeadingRad])));
                worstSpeedMps = Math.Max(worstSpeedMps, Math.Abs(x[SpeedMps] - y[SpeedMps]));
                worstVarM2 = Math.Max(worstVarM2, Math.Abs(p[0] - q[0]));
                compared++;
            }
        }

        int fullSteps = full.Forward.Sum(s => s.Count);
        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"interval {intervalUs / 1e6:F1} s: {compared} recorded instants of {fullSteps} forward steps ({all.Length} measurements); "
            + $"largest differences: position {worstPositionM:E2} m, heading {worstHeadingRad:E2} rad, speed {worstSpeedMps:E2} m/s, east variance {worstVarM2:E2} m²"));
        Assert.True(compared > 100, $"only {compared} instants compared");
    }

    [Fact]
    public void Distance_and_its_sd_from_the_compacted_record_equal_the_full_step_ones()
    {
        var all = Round.Value.All;
        ReplayResult full = TrackReplay.Run(Processor, TrackState.Empty, all);
        var every = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 0);
        var perSecond = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 1_000_000);
        long from = full.Smoothed[0].TimesUs[0] + 30_000_000, to = full.Smoothed[^1].TimesUs[^1] - 30_000_000;
        DistanceEstimate reference = DistanceIntegrator.Integrate(full.Smoothed, from, to);
        DistanceEstimate compacted = DistanceIntegrator.Integrate(every, from, to);
        DistanceEstimate coarse = DistanceIntegrator.Integrate(perSecond, from, to);
        double truth = TrueDistance(Round.Value.Run.Truth, from, to);
        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"truth {truth:F2} m; full-step {reference.DistanceM:F4} ± {reference.SigmaM:F4} m; compacted (every instant) {compacted.DistanceM:F4} ± {compacted.SigmaM:F4} m; "
            + $"compacted (1 s) {coarse.DistanceM:F4} ± {coarse.SigmaM:F4} m; stationary {reference.StationaryS:F1} / {compacted.StationaryS:F1} / {coarse.StationaryS:F1} s"));

        // Same instants, same algebra: equal to round-off (derived).
        AssertNear.Equal(reference.DistanceM, compacted.DistanceM, 1e-6, "distance (m)");
        AssertNear.Equal(reference.SigmaM, compacted.SigmaM, 1e-6, "distance sd (m)");
        AssertNear.Equal(reference.StationaryS, compacted.StationaryS, 1e-9, "stationary time (s)");

        // Recording once a second integrates the CTRA increment over 1 s instead of 0.1 s steps: not the same sum, so
        // it is checked against the truth (within 0.5 % of the distance, the service's stated accuracy goal).
        AssertNear.Equal(truth, coarse.DistanceM, 0.005 * truth, "distance from 1 s instants vs truth (m)");
        AssertNear.Equal(truth, reference.DistanceM, 0.005 * truth, "full-step distance vs truth (m)");
    }

    [Fact]
    public void Trapezoid_distance_is_the_same_from_both_records_and_bounded_across_a_parked_gap()
    {
        // Two rounds with ten minutes parked and silent between them (invented demo data).
        var network = new DeliveryNetwork();
        var suite = SensorSuite.ForProfile(NoiseProfile.DeliveryVan) with { OutlierProbability = 0.01 };
        TruthTrajectory first = network.PlanRound(1, stopCount: 3, seed: 4300, minDwellS: 20, maxDwellS: 40).Drive();
        TruthTrajectory second = network.PlanRound(1, stopCount: 3, seed: 4301, minDwellS: 20, maxDwellS: 40)
            .Drive(new RouteDriverOptions { StartTimeUs = first.EndTimeUs + 600_000_000 });
        var all = MeasurementGenerator.Generate(first, suite, 91).Measurements.Concat(MeasurementGenerator.Generate(second, suite, 92).Measurements).ToArray();
        ReplayResult full = TrackReplay.Run(Processor, TrackState.Empty, all);
        var every = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 0);
        var perSecond = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 1_000_000);
        long from = first.StartTimeUs + 20_000_000, to = second.EndTimeUs;
        DistanceEstimate reference = TrapezoidDistanceIntegrator.Integrate(full.Smoothed, from, to);
        DistanceEstimate compacted = TrapezoidDistanceIntegrator.Integrate(every, from, to);
        DistanceEstimate coarse = TrapezoidDistanceIntegrator.Integrate(perSecond, from, to);
        DistanceEstimate ctra = DistanceIntegrator.Integrate(perSecond, from, to);
        double truth = TrueDistance(first, from, to) + TrueDistance(second, from, to);
        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"truth {truth:F2} m; trapezoid full-step {reference.DistanceM:F3} ± {reference.SigmaM:F3} m, compacted every instant {compacted.DistanceM:F3} ± {compacted.SigmaM:F3} m, "
            + $"compacted 1 s {coarse.DistanceM:F3} ± {coarse.SigmaM:F3} m; CTRA increments from 1 s instants across the gap {ctra.DistanceM:F1} m"));

        // Same instants, same algebra (derived): equal to round-off.
        AssertNear.Equal(reference.DistanceM, compacted.DistanceM, 1e-6, "trapezoid distance (m)");
        AssertNear.Equal(reference.SigmaM, compacted.SigmaM, 1e-6, "trapezoid distance sd (m)");

        // Against the truth: within 0.5 % (the service's stated accuracy goal), the ten silent minutes included.
        AssertNear.Equal(truth, coarse.DistanceM, 0.005 * truth, "trapezoid distance from 1 s instants vs truth (m)");
        AssertNear.Equal(truth, reference.DistanceM, 0.005 * truth, "trapezoid full-step distance vs truth (m)");
        Assert.True(coarse.SigmaM > 0 && coarse.StationaryS > 600, $"sd {coarse.SigmaM} m, stationary {coarse.StationaryS} s");
    }

    [Fact]
    public void Discarding_the_run_in_keeps_the_window_bitwise_and_memory_bounded()
    {
        var all = Round.Value.All;
        var whole = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 1_000_000);
        long cut = whole[0].TimesUs[whole[0].Count / 2];
        var windowed = CompactedTrackReplay.Run(Processor, TrackState.Empty, all, 1_000_000, discardBeforeUs: cut);
        SmoothedSegment a = whole[^1], b = windowed[^1];
        int offset = a.TimesUs.IndexOf(b.TimesUs[0]);
        Assert.True(offset > 0, "the windowed run kept instants from the start");
        Assert.Equal(cut, b.TimesUs[0]);
        Assert.Equal(a.Count - offset, b.Count);
        for (int k = 0; k < b.Count; k++)
        {
            for (int i = 0; i < StateVector.Length; i++)
            {
                Assert.Equal(a.Means[k + offset][i], b.Means[k][i]);
            }
        }

        double durationS = (all[^1].TimeUs - all[0].TimeUs) / 1e6;
        output.WriteLine(string.Create(CultureInfo.InvariantCulture, $"{all.Length} measurements over {durationS:F0} s: {a.Count} instants kept at 1 s, {b.Count} after the cut"));
        Assert.True(a.Count <= durationS + 2, $"{a.Count} instants for {durationS} s at 1 s spacing");
    }

    internal static double TrueDistance(TruthTrajectory truth, long fromUs, long toUs)
    {
        double distance = 0;
        TruthSample? previous = null;
        foreach (TruthSample sample in truth.Samples)
        {
            if (sample.TimeUs < fromUs || sample.TimeUs > toUs)
            {
                continue;
            }

            if (previous is { } p)
            {
                distance += Math.Sqrt(Math.Pow(sample.EastM - p.EastM, 2) + Math.Pow(sample.NorthM - p.NorthM, 2));
            }

            previous = sample;
        }

        return distance;
    }

    private static void AssertSymmetricPositiveDefinite(StateMatrix p, string at)
    {
        var values = new double[N, N];
        for (int i = 0; i < N; i++)
        {
            for (int j = 0; j < N; j++)
            {
                values[i, j] = p[(i * N) + j];
            }
        }

        var dense = MathNet.Numerics.LinearAlgebra.Matrix<double>.Build.DenseOfArray(values);
        for (int i = 0; i < N; i++)
        {
            for (int j = 0; j < N; j++)
            {
                Assert.Equal(p[(i * N) + j], p[(j * N) + i]);
            }
        }

        Assert.True(dense.Evd().EigenValues.All(e => e.Real > 0), "smoothed covariance not positive definite" + at);
    }

    /// <summary>Passes every call on and counts updates, adjustments and posteriors.</summary>
    private sealed class CountingRecorder(IStepRecorder inner) : IStepRecorder
    {
        public int Updates { get; private set; }

        public int Adjustments { get; private set; }

        public int Posteriors { get; private set; }

        public void Start(long timeUs, in StateVector x, in StateMatrix p, in FusionService.Estimation.Geodesy.LocalTangentPlane plane) => inner.Start(timeUs, x, p, plane);

        public void Predicted(in StateMatrix f, in StateVector xPredicted, in StateMatrix pPredicted) => inner.Predicted(f, xPredicted, pPredicted);

        public void Updated(in FusionService.Estimation.Filtering.UpdateFactors factors)
        {
            Updates++;
            inner.Updated(factors);
        }

        public void Adjusted()
        {
            Adjustments++;
            inner.Adjusted();
        }

        public void Posterior(long timeUs, in StateVector x, in StateMatrix p, in FusionService.Estimation.Geodesy.LocalTangentPlane plane)
        {
            Posteriors++;
            inner.Posterior(timeUs, x, p, plane);
        }
    }
}
