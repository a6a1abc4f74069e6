using FusionService.Estimation.Filtering;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Smoothing;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Reference;

/// <summary>
/// Fixed-interval Rauch-Tung-Striebel smoother over one forward segment of the vehicle filter, in its extended form
/// (the Jacobians of the forward pass stand in for the transition matrix). A reference: it keeps every forward step, and
/// the tests hold the serving smoother (<see cref="CompactingStepRecorder"/> with
/// <see cref="CompactedRauchTungStriebelSmoother"/>) to it.
/// </summary>
/// <remarks>
/// Rauch, Tung and Striebel (1965), "Maximum likelihood estimates of linear dynamic systems", AIAA J. 3(8):
/// C(k) = P(k|k) F(k+1)ᵀ P(k+1|k)⁻¹, x(k|N) = x(k|k) + C(k) [x(k+1|N) - x(k+1|k)],
/// P(k|N) = P(k|k) + C(k) [P(k+1|N) - P(k+1|k)] C(k)ᵀ. The gain is computed by a Cholesky solve, never an explicit
/// inverse; heading differences are wrapped to (-π, π].
/// </remarks>
public static class RauchTungStriebelSmoother
{
    private const int N = StateMatrix.Size;

    /// <summary>Smooths one segment as recorded by <see cref="ForwardPassRecorder"/>.</summary>
    /// <exception cref="FilterDivergenceException">A predicted covariance is not positive definite.</exception>
    public static SmoothedSegment Smooth(IReadOnlyList<ForwardStep> segment)
    {
        ArgumentNullException.ThrowIfNull(segment);
        int count = segment.Count;
        var times = new long[count];
        var planes = new LocalTangentPlane[count];
        var means = new StateVector[count];
        var covariances = new StateMatrix[count];
        var gains = new StateMatrix[count];
        if (count == 0)
        {
            return new SmoothedSegment(times, planes, means, covariances, gains);
        }

        ForwardStep last = segment[count - 1];
        times[count - 1] = last.TimeUs;
        planes[count - 1] = last.Plane;
        means[count - 1] = last.Filtered;
        covariances[count - 1] = last.FilteredCovariance;
        for (int k = count - 2; k >= 0; k--)
        {
            ForwardStep step = segment[k];
            ForwardStep next = segment[k + 1];
            times[k] = step.TimeUs;
            planes[k] = step.Plane;
            if (!next.HasPrediction)
            {
                throw new ArgumentException($"step {k + 1} of the segment has no prediction", nameof(segment));
            }

            SmootherGain(step, next, k, ref gains[k]);
            means[k] = SmoothedMean(step, next, means[k + 1], gains[k]);
            covariances[k] = SmoothedCovariance(step, next, covariances[k + 1], gains[k]);
        }

        return new SmoothedSegment(times, planes, means, covariances, gains);
    }

    /// <summary>
    /// C(k) = P(k|k) F(k+1)ᵀ P(k+1|k)⁻¹, by solving P(k+1|k) C(k)ᵀ = F(k+1) P(k|k) with the Cholesky factor of the
    /// predicted covariance.
    /// </summary>
    /// <exception cref="FilterDivergenceException">P(k+1|k) is not positive definite.</exception>
    private static void SmootherGain(in ForwardStep step, in ForwardStep next, int k, ref StateMatrix gain)
    {
        Span<double> chol = stackalloc double[StateMatrix.Length];
        ((ReadOnlySpan<double>)next.PredictedCovariance).CopyTo(chol);
        if (!Cholesky.FactorInPlace(chol, N))
        {
            throw new FilterDivergenceException($"predicted covariance at step {k + 1} is not positive definite");
        }

        StateMatrix gainTransposed = default;
        MatrixKernels.Multiply(next.Transition, step.FilteredCovariance, gainTransposed);
        Cholesky.SolveInPlace(chol, ref gainTransposed);
        MatrixKernels.Transpose(gainTransposed, ref gain);
    }

    /// <summary>x(k|N) = x(k|k) + C(k) [x(k+1|N) - x(k+1|k)], heading difference and result wrapped to (-π, π].</summary>
    private static StateVector SmoothedMean(in ForwardStep step, in ForwardStep next, in StateVector smoothedNext, in StateMatrix gain)
    {
        Span<double> dx = stackalloc double[N];
        for (int i = 0; i < N; i++)
        {
            dx[i] = smoothedNext[i] - next.Predicted[i];
        }

        dx[HeadingRad] = Angles.WrapPi(dx[HeadingRad]);
        StateVector mean = step.Filtered;
        MatrixKernels.AddMultiply(ref mean, gain, dx);
        mean[HeadingRad] = Angles.WrapPi(mean[HeadingRad]);
        return mean;
    }

    /// <summary>P(k|N) = P(k|k) + C(k) [P(k+1|N) - P(k+1|k)] C(k)ᵀ, symmetrised.</summary>
    private static StateMatrix SmoothedCovariance(in ForwardStep step, in ForwardStep next, in StateMatrix smoothedNext, in StateMatrix gain)
    {
        StateMatrix dp = default;
        for (int i = 0; i < StateMatrix.Length; i++)
        {
            dp[i] = smoothedNext[i] - next.PredictedCovariance[i];
        }

        StateMatrix cdp = default;
        MatrixKernels.Multiply(gain, dp, cdp);
        StateMatrix cov = step.FilteredCovariance;
        MatrixKernels.AddMultiplyByTransposed(ref cov, cdp, gain);
        MatrixKernels.Symmetrize(ref cov);
        return cov;
    }
}
