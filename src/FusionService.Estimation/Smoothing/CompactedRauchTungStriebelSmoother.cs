using FusionService.Estimation.Filtering;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Smoothing;

/// <summary>
/// Backward pass of the Rauch-Tung-Striebel smoother over a <see cref="CompactedSegment"/>: one equivalent step per
/// pair of recorded instants (see <see cref="CompactingStepRecorder"/> for the derivation).
/// </summary>
/// <remarks>
/// Rauch, Tung and Striebel (1965), AIAA J. 3(8), in the compacted form x(r|N) = μ(r) + G(r) [x(k|N) - x(k|·)],
/// P(r|N) = D(r) + G(r) P(k|N) G(r)ᵀ, started from the filtered state at the segment's last instant. Works in place
/// (no allocation): the segment's arrays become the smoothed means, covariances and gains. Heading is wrapped to (-π, π].
/// </remarks>
public static class CompactedRauchTungStriebelSmoother
{
    private const int N = StateMatrix.Size;

    /// <summary>Smooths <paramref name="segment"/> in place; a second call does nothing.</summary>
    /// <exception cref="FilterDivergenceException">A smoothed covariance has a non-finite entry.</exception>
    public static void Smooth(CompactedSegment segment)
    {
        ArgumentNullException.ThrowIfNull(segment);
        if (segment.IsSmoothed)
        {
            return;
        }

        StateVector[] means = segment.Means;
        StateMatrix[] covariances = segment.Covariances;
        StateMatrix[] gains = segment.Gains;
        StateVector[] predicted = segment.PredictedNext;
        Span<double> dx = stackalloc double[N];
        for (int k = segment.Count - 2; k >= 0; k--)
        {
            ref readonly StateMatrix g = ref gains[k];
            for (int i = 0; i < N; i++)
            {
                dx[i] = means[k + 1][i] - predicted[k][i];
            }

            dx[HeadingRad] = Angles.WrapPi(dx[HeadingRad]);
            ref StateVector mean = ref means[k];
            MatrixKernels.AddMultiply(ref mean, g, dx);
            mean[HeadingRad] = Angles.WrapPi(mean[HeadingRad]);

            StateMatrix gp = default;
            MatrixKernels.Multiply(g, covariances[k + 1], gp);
            ref StateMatrix cov = ref covariances[k];
            MatrixKernels.AddMultiplyByTransposed(ref cov, gp, g);
            MatrixKernels.Symmetrize(ref cov);
            for (int i = 0; i < N; i++)
            {
                if (!double.IsFinite(cov[(i * N) + i]) || !double.IsFinite(mean[i]))
                {
                    throw new FilterDivergenceException($"smoothed state at recorded instant {k} is not finite");
                }
            }
        }

        segment.IsSmoothed = true;
    }
}
