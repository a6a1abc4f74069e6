using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Models;
using FusionService.Scenarios;
using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Tests.Scenarios;

public class ModelConsistentTruthTests
{
    [Fact]
    public void Process_noise_increments_are_chi_square_with_the_models_own_Q()
    {
        // If w_k ~ N(0, Q_k) then w_kᵀ Q_k⁻¹ w_k is chi-square with 8 dof and the sum over K independent steps is
        // chi-square with 8 K dof (derived); 99 % interval from MathNet ChiSquared.InvCDF.
        double sum = 0;
        int steps = 0;
        for (int seed = 1; seed <= 10; seed++)
        {
            TruthTrajectory truth = ModelConsistentTruth.Generate(new ModelConsistentTruthOptions { DurationS = 10 }, seed);
            for (int k = 0; k + 1 < truth.Samples.Count; k++)
            {
                sum += Mahalanobis2(truth, k, new ModelConsistentTruthOptions(), Enumerable.Range(0, 8).ToArray());
                steps++;
            }
        }

        Assert.Equal(1000, steps);
        (double low, double high) = ScenarioStatistics.ChiSquareInterval(8.0 * steps, 0.99);
        AssertNear.Within(low, high, sum, 0.0, "sum of w' Q^-1 w over 1000 steps");
    }

    [Fact]
    public void Constant_sensor_errors_stay_constant_and_motion_increments_stay_chi_square()
    {
        var options = new ModelConsistentTruthOptions { DurationS = 20, SensorErrorsRandomWalk = false, InitialGyroBiasRps = 0.01, InitialWheelScale = 0.98 };
        TruthTrajectory truth = ModelConsistentTruth.Generate(options, seed: 5);
        Assert.NotNull(truth.SensorErrors);
        Assert.All(truth.SensorErrors!, e =>
        {
            Assert.Equal(0.01, e.GyroBiasRps);
            Assert.Equal(0.98, e.WheelScale);
        });

        double sum = 0;
        int[] motion = [0, 1, 2, 3, 4, 5];
        for (int k = 0; k + 1 < truth.Samples.Count; k++)
        {
            sum += Mahalanobis2(truth, k, options, motion);
        }

        (double low, double high) = ScenarioStatistics.ChiSquareInterval(6.0 * (truth.Samples.Count - 1), 0.99);
        AssertNear.Within(low, high, sum, 0.0, "sum of w' Q^-1 w over the six motion states");
    }

    [Fact]
    public void Same_seed_gives_identical_truth_and_another_seed_does_not()
    {
        var options = new ModelConsistentTruthOptions();
        TruthTrajectory a = ModelConsistentTruth.Generate(options, 3);
        TruthTrajectory b = ModelConsistentTruth.Generate(options, 3);
        TruthTrajectory c = ModelConsistentTruth.Generate(options, 4);
        Assert.Equal(a.Samples, b.Samples);
        Assert.Equal(a.SensorErrors!, b.SensorErrors!);
        Assert.NotEqual(a.Samples, c.Samples);
        Assert.Equal(101, a.Samples.Count);
        Assert.Equal(100_000, a.SamplePeriodUs);
    }

    private static double Mahalanobis2(TruthTrajectory truth, int k, ModelConsistentTruthOptions options, int[] components)
    {
        StateVector x = ModelConsistentTruth.ToStateVector(truth.Samples[k], truth.SensorErrors![k]);
        StateVector next = ModelConsistentTruth.ToStateVector(truth.Samples[k + 1], truth.SensorErrors![k + 1]);
        double dtS = truth.SamplePeriodUs / 1e6;
        StateMatrix q = default;
        CtraMotionModel.AddProcessNoise(ref q, x, dtS, options.Profile, options.Stationary);
        CtraMotionModel.Predict(ref x, dtS, out _);
        int n = components.Length;
        var qm = Matrix<double>.Build.Dense(n, n, (i, j) => q[(components[i] * StateMatrix.Size) + components[j]]);
        var w = Vector<double>.Build.Dense(n, i =>
            components[i] == StateIndex.HeadingRad ? Angles.WrapPi(next[components[i]] - x[components[i]]) : next[components[i]] - x[components[i]]);
        return w.DotProduct(qm.Cholesky().Solve(w));
    }
}
