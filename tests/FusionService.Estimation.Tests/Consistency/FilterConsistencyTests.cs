using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using MathNet.Numerics.Distributions;
using MathNet.Numerics.LinearAlgebra;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Consistency;

/// <summary>
/// Monte Carlo consistency of the full filter on truth that follows its own model (Bar-Shalom, Li and Kirubarajan 2001,
/// NEES and NIS tests; section from memory; bands as in ../shared/check-values.md §6, derived):
/// the NEES averaged over N runs at a time step lies in [χ²(0.025; N n), χ²(0.975; N n)] / N, and the NIS of each
/// sensor, white for a consistent filter, averaged over all runs and steps lies in its band with N K m degrees of freedom.
/// </summary>
public sealed class FilterConsistencyTests(ITestOutputHelper output)
{
    private const int Runs = 50;

    // A gentler process than the van default keeps the model-consistent truth physical for the 30 s runs: the triple
    // integrator's speed spread grows like sqrt(q T³ / 3), 4.2 m/s here against a start at 18 m/s (GNSS reports |v|,
    // which the filter does not model for reversing).
    // The scenario's GNSS error is white, so the filter is told so (WhiteGnssProfile).
    private static readonly NoiseProfile Profile = WhiteGnssProfile.DeliveryVan with
    {
        JerkDensityM2PerS5 = 0.002,
        YawAccelDensityRad2PerS3 = 0.001,
        GyroBiasDensityRad2PerS3 = 1e-8,
        WheelScaleDensityPerS = 1e-8,
    };

    // Course noise in the scenario is speed sigma / speed with no floor; the filter must model the same. The gate is
    // nearly open so that it does not truncate the NIS distribution under test.
    // Every measurement is fused (a gate this wide passes all but one in a million), and the multipath step rule, which sets
    // fixes aside on a step the white noise makes about once in a thousand, is off: the check is of the filter's algebra.
    private static readonly TrackOptions Options = new() { CourseSigmaFloorRad = 1e-6, GateProbability = 0.999999, MultipathStepProbability = 0 };

    [Fact]
    public void Check_values_of_the_bands_reproduce()
    {
        // ../shared/check-values.md §6 (derived): N = 50, n = 2 -> [1.484, 2.591]; N = 50, n = 1 -> [0.647, 1.428].
        (double lo2, double hi2) = NisConsistencyTest.Interval(50, 100);
        (double lo1, double hi1) = NisConsistencyTest.Interval(50, 50);
        AssertNear.Equal(1.484, lo2, 0.0005, "lower band, N=50 n=2");
        AssertNear.Equal(2.591, hi2, 0.0005, "upper band, N=50 n=2");
        AssertNear.Equal(0.647, lo1, 0.0005, "lower band, N=50 n=1");
        AssertNear.Equal(1.428, hi1, 0.0005, "upper band, N=50 n=1");
    }

    [Fact]
    public void Nees_and_nis_lie_in_their_chi_square_bands()
    {
        var processor = new TrackProcessor(Options, Profile);
        var neesByEpoch = new SortedDictionary<long, double>();
        NisAccumulator[] nisOf = [new(), new(), new(), new()];
        for (int run = 0; run < Runs; run++)
        {
            ScenarioRun scenario = Scenario(run);
            TrackState state = StartAtPerturbedTruth(scenario, new Random(3000 + run));
            long startUs = state.TimeUs;
            foreach (Measurement m in scenario.Measurements.Where(m => m.TimeUs > startUs))
            {
                MeasurementOutcome outcome = processor.Process(ref state, m);
                int k = (int)m.Kind;
                Assert.True(outcome.Kind == OutcomeKind.Accepted, $"run {run}: {m.Kind} at {(m.TimeUs - startUs) / 1e6} s was {outcome.Kind}, NIS {outcome.Nis}");
                nisOf[k].Add(outcome.Nis, outcome.Dimension);

                if (m.Kind == SensorKind.GnssPosition)
                {
                    neesByEpoch[m.TimeUs] = neesByEpoch.GetValueOrDefault(m.TimeUs) + Nees(state, scenario.TrueStateAt(m.TimeUs));
                }
            }
        }

        (double lower, double upper) = (ChiSquared.InvCDF(Runs * 8, 0.025) / Runs, ChiSquared.InvCDF(Runs * 8, 0.975) / Runs);
        int inside = neesByEpoch.Values.Count(sum => sum / Runs >= lower && sum / Runs <= upper);
        output.WriteLine($"NEES band [{lower:F3}, {upper:F3}] for n = 8: {inside} of {neesByEpoch.Count} epochs inside; means "
            + string.Join(" ", neesByEpoch.Values.Select(v => (v / Runs).ToString("F2", System.Globalization.CultureInfo.InvariantCulture))));

        // With 95 % bands, a consistent filter has about 95 % of epochs inside; at least 80 % is asked (common practice
        // for a pass/fail on a few dozen correlated epochs).
        Assert.True(inside >= 0.8 * neesByEpoch.Count, $"only {inside} of {neesByEpoch.Count} epochs inside the NEES band");

        foreach (SensorKind kind in Enum.GetValues<SensorKind>())
        {
            NisAccumulator nis = nisOf[(int)kind];
            double mean = nis.Mean;
            (double lo, double hi) = nis.Interval();
            output.WriteLine($"{kind}: mean NIS {mean:F4} over {nis.Count} innovations ({nis.Dof} dof), band [{lo:F4}, {hi:F4}]");
            Assert.InRange(mean, lo, hi);
        }
    }

    [Fact]
    public void Clean_data_rejection_rate_matches_the_gate_probability()
    {
        // A consistent filter's NIS is chi-square, so a gate of probability p rejects a fraction 1 - p of clean
        // measurements (derived). Counted here for p = 0.95 on every clean measurement, against the binomial 99.9 %
        // interval. The filter runs with its gate nearly open so that one rejection does not change what the next
        // innovation sees: with the 0.95 gate applied, GNSS velocity was seen rejected at 7.5 % instead of 5 %,
        // because each rejected sample leaves speed and heading less corrected for the next one.
        var processor = new TrackProcessor(Options, Profile);
        var gate = new Gating.ChiSquareGate(0.95);
        var beyond = new int[4];
        var total = new int[4];
        for (int run = 0; run < Runs; run++)
        {
            ScenarioRun scenario = Scenario(run);
            TrackState state = StartAtPerturbedTruth(scenario, new Random(3000 + run));
            long startUs = state.TimeUs;
            foreach (Measurement m in scenario.Measurements.Where(m => m.TimeUs > startUs))
            {
                MeasurementOutcome outcome = processor.Process(ref state, m);
                total[(int)m.Kind]++;
                beyond[(int)m.Kind] += gate.Passes(outcome.Nis, outcome.Dimension) ? 0 : 1;
            }
        }

        foreach (SensorKind kind in Enum.GetValues<SensorKind>())
        {
            int k = (int)kind;
            int lower = BinomialQuantile(0.05, total[k], 0.0005), upper = BinomialQuantile(0.05, total[k], 0.9995);
            output.WriteLine($"{kind}: {beyond[k]} of {total[k]} clean measurements beyond the 95 % gate ({100.0 * beyond[k] / total[k]:F2} %), 99.9 % interval [{lower}, {upper}]");
            Assert.InRange(beyond[k], lower, upper);
        }
    }

    [Fact]
    public void Smoothed_distance_sigma_matches_the_spread_of_its_errors()
    {
        // The distance's standard deviation comes from the smoothed covariances and cross-covariances; over 50 runs the
        // normalised squared errors (D - D_true)² / σ² must average to 1 within the chi-square band with 50 dof
        // (../shared/check-values.md §6, n = 1: [0.647, 1.428], derived). D_true sums the model's own along-track
        // increments v τ + a τ² / 2 over the truth's 0.1 s steps.
        var processor = new TrackProcessor(Options, Profile);
        double sum = 0;
        for (int run = 0; run < Runs; run++)
        {
            ScenarioRun scenario = Scenario(run);
            TrackState start = StartAtPerturbedTruth(scenario, new Random(3000 + run));
            var replay = TrackReplay.Run(processor, start, scenario.Measurements.Where(m => m.TimeUs > start.TimeUs));
            long from = start.TimeUs + 5_000_000, to = scenario.Truth.EndTimeUs - 5_000_000;
            DistanceEstimate d = DistanceIntegrator.Integrate(replay.Smoothed, from, to);
            double truthM = 0;
            for (long t = from; t < to; t += scenario.Truth.SamplePeriodUs)
            {
                TruthSample x = scenario.Truth.At(t);
                double tau = Math.Min(scenario.Truth.SamplePeriodUs, to - t) / 1e6;
                truthM += (x.SpeedMps * tau) + (0.5 * x.AccelMps2 * tau * tau);
            }

            sum += (d.DistanceM - truthM) * (d.DistanceM - truthM) / (d.SigmaM * d.SigmaM);
        }

        (double lower, double upper) = NisConsistencyTest.Interval(Runs, Runs);
        output.WriteLine($"mean normalised squared distance error {sum / Runs:F3}, band [{lower:F3}, {upper:F3}]");
        Assert.InRange(sum / Runs, lower, upper);
    }

    /// <summary>Smallest k with P(X ≤ k) ≥ q for X ~ Binomial(n, p), from MathNet's CDF.</summary>
    private static int BinomialQuantile(double p, int n, double q)
    {
        int k = 0;
        while (Binomial.CDF(p, n, k) < q)
        {
            k++;
        }

        return k;
    }

    private static ScenarioRun Scenario(int run)
    {
        var truthOptions = new ModelConsistentTruthOptions
        {
            Profile = Profile,
            DurationS = 30,
            InitialSpeedMps = 18,
            InitialHeadingRad = 0.4,
        };
        TruthTrajectory truth = ModelConsistentTruth.Generate(truthOptions, seed: 1000 + run);
        return MeasurementGenerator.Generate(truth, SensorSuite.ForProfile(Profile), seed: 2000 + run);
    }

    private static TrackState StartAtPerturbedTruth(ScenarioRun scenario, Random random)
    {
        // The filter starts at the truth plus a draw from its own initial covariance, so the initial error is consistent.
        long startUs = scenario.Truth.StartTimeUs;
        StateVector truth = scenario.TrueStateAt(startUs);
        double[] sigma = [3, 3, 0.05, 0.5, 0.02, 0.5, Profile.InitialGyroBiasSigmaRps, Profile.InitialWheelScaleSigma];
        TrackState s = TrackState.Empty;
        for (int i = 0; i < VehicleCount; i++)
        {
            s.X[i] = truth[i] + (sigma[i] * Normal.Sample(random, 0, 1));
            s.P[(i * StateMatrix.Size) + i] = sigma[i] * sigma[i];
        }

        // The correlated GNSS error states start at zero with the correlated share of the fixes' variance.
        double sigmaM = SensorSuite.ForProfile(Profile).GnssSigmaM;
        s.GnssCorrelatedVarianceM2 = Profile.GnssCorrelatedFraction * sigmaM * sigmaM;
        s.P[(GnssErrorEastM * StateMatrix.Size) + GnssErrorEastM] = s.GnssCorrelatedVarianceM2;
        s.P[(GnssErrorNorthM * StateMatrix.Size) + GnssErrorNorthM] = s.GnssCorrelatedVarianceM2;

        s.TimeUs = startUs;
        s.Phase = TrackPhase.Running;
        s.Plane = new LocalTangentPlane(GeodeticPoint.FromDegrees(scenario.Truth.OriginLatitudeDeg, scenario.Truth.OriginLongitudeDeg));
        s.HasPlane = true;
        s.HasCalibration = true;
        return s;
    }

    private static double Nees(TrackState state, StateVector truth)
    {
        // NEES of the vehicle's eight components (the marginal of the state; the scenario's GNSS error is white).
        var e = Vector<double>.Build.Dense(VehicleCount);
        var p = Matrix<double>.Build.Dense(VehicleCount, VehicleCount);
        for (int i = 0; i < VehicleCount; i++)
        {
            e[i] = state.X[i] - truth[i];
            for (int j = 0; j < VehicleCount; j++)
            {
                p[i, j] = state.P[(i * StateMatrix.Size) + j];
            }
        }

        e[HeadingRad] = Angles.WrapPi(e[HeadingRad]);
        return e * p.Cholesky().Solve(e);
    }
}
