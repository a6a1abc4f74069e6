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
        Span<double> gp = stackalloc double[StateMatrix.Length];
        for (int k = segment.Count - 2; k >= 0; k--)
        {
            ref readonly StateMatrix g = ref gains[k];
            for (int i = 0; i < N; i++)
            {
                dx[i] = means[k + 1][i] - predicted[k][i];
            }

            dx[HeadingRad] = Angles.WrapPi(dx[HeadingRad]);
            ref StateVector mean = ref means[k];
            for (int i = 0; i < N; i++)
            {
                double sum = 0;
                for (int j = 0; j < N; j++)
                {
                    sum += g[(i * N) + j] * dx[j];
                }

                mean[i] += sum;
            }

            mean[HeadingRad] = Angles.WrapPi(mean[HeadingRad]);

            ref readonly StateMatrix next = ref covariances[k + 1];
            for (int i = 0; i < N; i++)
            {
                for (int j = 0; j < N; j++)
                {
                    double sum = 0;
                    for (int l = 0; l < N; l++)
                    {
                        sum += g[(i * N) + l] * next[(l * N) + j];
                    }

                    gp[(i * N) + j] = sum;
                }
            }

            ref StateMatrix cov = ref covariances[k];
            for (int i = 0; i < N; i++)
            {
                for (int j = 0; j < N; j++)
                {
                    double sum = 0;
                    for (int l = 0; l < N; l++)
                    {
                        sum += gp[(i * N) + l] * g[(j * N) + l];
                    }

                    cov[(i * N) + j] += sum;
                }
            }

            ExtendedKalmanFilter.Symmetrize(ref cov);
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
