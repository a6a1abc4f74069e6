using FusionService.Estimation.Reference;
using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// Scalar random walk xₖ = xₖ₋₁ + w (variance Q), z = x + v (variance R): source check-values §3 (algebraic
/// Riccati equation, derived). Prior P = (Q + √(Q² + 4QR)) / 2, posterior P = prior - Q, K = posterior / R,
/// interior RTS-smoothed variance QR / √(Q² + 4QR) (Rauch, Tung and Striebel, AIAA J. 3(8), 1965).
/// </summary>
public sealed class ScalarRandomWalkSteadyStateTests
{
    private const int LastStep = 200;
    private const int Interior = 100;

    [Theory]
    // check-values §3 (derived): Q = R = 1 -> prior 1.6180340, posterior = K 0.6180340, smoothed 0.4472136.
    [InlineData(1.0, 1.0, 1.6180340, 0.6180340, 0.6180340, 0.4472136)]
    // check-values §3 (derived): Q = 1, R = 4 -> prior 2.5615528, posterior 1.5615528, K 0.3903882, smoothed 0.9701425.
    [InlineData(1.0, 4.0, 2.5615528, 1.5615528, 0.3903882, 0.9701425)]
    public void Interior_variances_and_gain_reach_the_Riccati_steady_state(
        double q, double r, double prior, double posterior, double gain, double smoothed)
    {
        var run = Run(q, r, seed: 3);

        // The tabulated values carry 7 decimals: half a unit in the last place.
        const double tabulated = 0.5e-7;
        RelativeAssert.Absolute(prior, run.Predicted[Interior]!.Covariance[0, 0], tabulated, "prior variance");
        RelativeAssert.Absolute(posterior, run.Filtered[Interior].Covariance[0, 0], tabulated, "posterior variance");
        RelativeAssert.Absolute(gain, run.Gains[Interior], tabulated, "gain");
        RelativeAssert.Absolute(smoothed, run.Smoothed[Interior].Covariance[0, 0], tabulated, "smoothed variance");
    }

    [Theory]
    [InlineData(1.0, 1.0)]
    [InlineData(1.0, 4.0)]
    [InlineData(0.25, 4.0)]
    [InlineData(9.0, 0.5)]
    public void Interior_values_equal_the_closed_forms(double q, double r)
    {
        var run = Run(q, r, seed: 4);

        // check-values §3 formulas (derived), recomputed here; after 100 steps the recursions have converged
        // far below 1e-12 relative for these ratios.
        double root = Math.Sqrt((q * q) + (4 * q * r));
        double prior = (q + root) / 2;
        double posterior = prior - q;
        RelativeAssert.Relative(prior, run.Predicted[Interior]!.Covariance[0, 0], 1e-12, "prior variance");
        RelativeAssert.Relative(posterior, run.Filtered[Interior].Covariance[0, 0], 1e-12, "posterior variance");
        RelativeAssert.Relative(posterior / r, run.Gains[Interior], 1e-12, "gain");
        RelativeAssert.Relative(q * r / root, run.Smoothed[Interior].Covariance[0, 0], 1e-12, "smoothed variance");
        Assert.True(run.Smoothed[Interior].Covariance[0, 0] < run.Filtered[Interior].Covariance[0, 0],
            "smoothing must reduce the interior variance");
    }

    private static RandomWalkRun Run(double q, double r, int seed)
    {
        var random = new Random(seed);
        var one = Dense.Scalar(1.0);
        var qm = Dense.Scalar(q);
        var rm = Dense.Scalar(r);
        var filtered = new List<GaussianEstimate>();
        var predicted = new List<GaussianEstimate?> { null };
        var transitions = new List<Matrix<double>?> { null };
        var gains = new List<double>();
        double truth = 0;
        var estimate = new GaussianEstimate(Dense.V(0.0), Dense.Scalar(100.0));
        for (int k = 0; k <= LastStep; k++)
        {
            if (k > 0)
            {
                truth += Math.Sqrt(q) * Dense.Gaussian(random);
                estimate = DenseKalmanFilter.Predict(estimate, one, qm);
                predicted.Add(estimate);
                transitions.Add(one);
            }

            var update = DenseKalmanFilter.Update(estimate, Dense.V(truth + (Math.Sqrt(r) * Dense.Gaussian(random))), one, rm);
            estimate = update.Posterior;
            filtered.Add(estimate);
            gains.Add(update.Gain[0, 0]);
        }

        var smoothed = DenseRauchTungStriebelSmoother.Smooth(filtered, predicted, transitions);
        return new RandomWalkRun(filtered, predicted, gains, smoothed);
    }

    private sealed record RandomWalkRun(
        IReadOnlyList<GaussianEstimate> Filtered,
        IReadOnlyList<GaussianEstimate?> Predicted,
        IReadOnlyList<double> Gains,
        IReadOnlyList<GaussianEstimate> Smoothed);
}
