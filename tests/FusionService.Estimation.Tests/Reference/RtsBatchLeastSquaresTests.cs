using FusionService.Estimation.Reference;
using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// The RTS smoother is the maximum a posteriori estimate of the whole trajectory of a linear-Gaussian model
/// (Rauch, Tung and Striebel, "Maximum likelihood estimates of linear dynamic systems", AIAA J. 3(8), 1965):
/// it must equal the solution of the stacked weighted least-squares problem over all states, whose inverse
/// information matrix holds the smoothed covariances on its diagonal blocks and the lag-one cross covariances
/// on the first off-diagonal blocks (derived). The batch side is solved with MathNet's Cholesky, independently
/// of the recursive filter and smoother.
/// </summary>
public sealed class RtsBatchLeastSquaresTests
{
    // Required agreement between the recursive and the batch solution.
    private const double RelativeTolerance = 1e-9;
    private const int LastStep = 30;
    private const double PeriodS = 1.0;

    [Theory]
    [InlineData(11)]
    [InlineData(12)]
    [InlineData(13)]
    public void Smoothed_means_covariances_and_cross_covariances_equal_batch_least_squares(int seed)
    {
        var problem = Problem.Simulate(seed);
        var (filtered, predicted, transitions) = RunFilter(problem);

        var smoothed = DenseRauchTungStriebelSmoother.SmoothWithCrossCovariance(filtered, predicted, transitions);
        var (batchMean, batchCovariance) = SolveBatch(problem);

        Assert.Equal(LastStep + 1, smoothed.Estimates.Count);
        Assert.Equal(LastStep, smoothed.LagOneCrossCovariances.Count);
        for (int component = 0; component < 2; component++)
        {
            string name = component == 0 ? "position, m" : "velocity, m/s";
            var recursive = Vector<double>.Build.Dense(LastStep + 1, k => smoothed.Estimates[k].Mean[component]);
            var batch = Vector<double>.Build.Dense(LastStep + 1, k => batchMean[(2 * k) + component]);
            RelativeAssert.Relative(batch, recursive, RelativeTolerance, $"smoothed {name} over the trajectory");
        }

        for (int k = 0; k <= LastStep; k++)
        {
            var covariance = smoothed.Estimates[k].Covariance;
            RelativeAssert.Relative(batchCovariance.SubMatrix(2 * k, 2, 2 * k, 2), covariance, RelativeTolerance, $"P[{k}|N]");
            RelativeAssert.SymmetricPositiveDefinite(covariance, $"P[{k}|N]");

            // Smoothing never increases uncertainty: P[k|k] - P[k|N] is positive semi-definite.
            var reduction = filtered[k].Covariance - covariance;
            double smallest = reduction.Evd(Symmetricity.Symmetric).EigenValues.Min(e => e.Real);
            Assert.True(smallest >= -1e-12 * filtered[k].Covariance.L1Norm(), $"P[{k}|k] - P[{k}|N] has eigenvalue {smallest}");
        }

        for (int k = 0; k < LastStep; k++)
        {
            RelativeAssert.Relative(
                batchCovariance.SubMatrix(2 * k, 2, 2 * (k + 1), 2), smoothed.LagOneCrossCovariances[k], RelativeTolerance,
                $"Cov(x[{k}], x[{k + 1}] | N)");
        }

        Assert.Equal(smoothed.Estimates, DenseRauchTungStriebelSmoother.Smooth(filtered, predicted, transitions));
    }

    private static (List<GaussianEstimate> Filtered, List<GaussianEstimate?> Predicted, List<Matrix<double>?> Transitions)
        RunFilter(Problem problem)
    {
        var filtered = new List<GaussianEstimate>();
        var predicted = new List<GaussianEstimate?> { null };
        var transitions = new List<Matrix<double>?> { null };
        var estimate = problem.Prior;
        for (int k = 0; k <= LastStep; k++)
        {
            if (k > 0)
            {
                estimate = DenseKalmanFilter.Predict(estimate, problem.F, problem.Q);
                predicted.Add(estimate);
                transitions.Add(problem.F);
            }

            if (problem.Measurements[k] is { } m)
            {
                estimate = DenseKalmanFilter.Update(estimate, m.Z, m.H, m.R).Posterior;
            }

            filtered.Add(estimate);
        }

        return (filtered, predicted, transitions);
    }

    /// <summary>
    /// Normal equations J X = b of the stacked problem over X = [x0; x1; …; x_N]: prior rows x0 - m0 weighted by
    /// P0⁻¹, process rows xₖ - F xₖ₋₁ weighted by Q⁻¹, measurement rows zₖ - H xₖ weighted by R⁻¹.
    /// </summary>
    private static (Vector<double> Mean, Matrix<double> Covariance) SolveBatch(Problem problem)
    {
        int size = 2 * (LastStep + 1);
        var information = Matrix<double>.Build.Dense(size, size);
        var rhs = Vector<double>.Build.Dense(size);

        void AddRows(Matrix<double> a, Matrix<double> weight, Vector<double> b)
        {
            var aw = a.TransposeThisAndMultiply(weight);
            information.SetSubMatrix(0, 0, information + (aw * a));
            rhs.SetSubVector(0, size, rhs + (aw * b));
        }

        var prior = Matrix<double>.Build.Dense(2, size);
        prior.SetSubMatrix(0, 0, Dense.Identity(2));
        AddRows(prior, problem.Prior.Covariance.Inverse(), problem.Prior.Mean);

        var qInverse = problem.Q.Inverse();
        for (int k = 1; k <= LastStep; k++)
        {
            var process = Matrix<double>.Build.Dense(2, size);
            process.SetSubMatrix(0, 2 * (k - 1), -problem.F);
            process.SetSubMatrix(0, 2 * k, Dense.Identity(2));
            AddRows(process, qInverse, Vector<double>.Build.Dense(2));
        }

        for (int k = 0; k <= LastStep; k++)
        {
            if (problem.Measurements[k] is { } m)
            {
                var rows = Matrix<double>.Build.Dense(m.H.RowCount, size);
                rows.SetSubMatrix(0, 2 * k, m.H);
                AddRows(rows, m.R.Inverse(), m.Z);
            }
        }

        var factor = information.Cholesky();
        return (factor.Solve(rhs), factor.Solve(Dense.Identity(size)));
    }

    private sealed record Measurement(Vector<double> Z, Matrix<double> H, Matrix<double> R);

    /// <summary>
    /// Seeded constant-velocity demo data (invented): continuous white acceleration q = 0.5 m²/s³, position fixes
    /// with sigma 2 m every step, a position-and-speed fix (speed sigma 0.5 m/s) every third step, and no
    /// measurement at steps 10 to 12.
    /// </summary>
    private sealed record Problem(
        GaussianEstimate Prior, Matrix<double> F, Matrix<double> Q, IReadOnlyList<Measurement?> Measurements)
    {
        public static Problem Simulate(int seed)
        {
            var random = new Random(seed);
            const double q = 0.5;
            const double t = PeriodS;
            var f = Dense.M(new[,] { { 1.0, t }, { 0.0, 1.0 } });
            var processNoise = Dense.M(new[,] { { q * t * t * t / 3, q * t * t / 2 }, { q * t * t / 2, q * t } });
            var prior = new GaussianEstimate(Dense.V(0.0, 10.0), Dense.M(new[,] { { 25.0, 0.0 }, { 0.0, 4.0 } }));
            var positionH = Dense.M(new[,] { { 1.0, 0.0 } });
            var positionR = Dense.Scalar(4.0);
            var bothH = Dense.Identity(2);
            var bothR = Dense.M(new[,] { { 4.0, 0.0 }, { 0.0, 0.25 } });
            var processFactor = processNoise.Cholesky().Factor;
            var priorFactor = prior.Covariance.Cholesky().Factor;

            Vector<double> Noise(Matrix<double> factor) =>
                factor * Vector<double>.Build.Dense(factor.RowCount, _ => Dense.Gaussian(random));

            var truth = prior.Mean + Noise(priorFactor);
            var measurements = new List<Measurement?>();
            for (int k = 0; k <= LastStep; k++)
            {
                if (k > 0)
                {
                    truth = (f * truth) + Noise(processFactor);
                }

                if (k is >= 10 and <= 12)
                {
                    measurements.Add(null);
                }
                else if (k % 3 == 0)
                {
                    measurements.Add(new Measurement((bothH * truth) + Noise(bothR.Cholesky().Factor), bothH, bothR));
                }
                else
                {
                    measurements.Add(new Measurement((positionH * truth) + Noise(positionR.Cholesky().Factor), positionH, positionR));
                }
            }

            return new Problem(prior, f, processNoise, measurements);
        }
    }
}
