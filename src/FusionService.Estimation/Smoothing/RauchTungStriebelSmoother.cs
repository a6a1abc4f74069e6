using FusionService.Estimation.Filtering;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Smoothing;

/// <summary>
/// Fixed-interval Rauch-Tung-Striebel smoother over one forward segment of the vehicle filter, in its extended form
/// (the Jacobians of the forward pass stand in for the transition matrix).
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
        Span<double> chol = stackalloc double[StateMatrix.Length];
        Span<double> column = stackalloc double[N];
        Span<double> dx = stackalloc double[N];
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

            // C(k)ᵀ solves P(k+1|k) Cᵀ = F P(k|k).
            for (int i = 0; i < StateMatrix.Length; i++)
            {
                chol[i] = next.PredictedCovariance[i];
            }

            if (!ExtendedKalmanFilter.CholeskyInPlace(chol, N))
            {
                throw new FilterDivergenceException($"predicted covariance at step {k + 1} is not positive definite");
            }

            StateMatrix gain = default;
            for (int col = 0; col < N; col++)
            {
                // Column col of Cᵀ = row col of C.
                for (int i = 0; i < N; i++)
                {
                    double sum = 0;
                    for (int j = 0; j < N; j++)
                    {
                        sum += next.Transition[(i * N) + j] * step.FilteredCovariance[(j * N) + col];
                    }

                    column[i] = sum;
                }

                ExtendedKalmanFilter.ForwardSubstitute(chol, N, column);
                ExtendedKalmanFilter.BackSubstitute(chol, N, column);
                for (int i = 0; i < N; i++)
                {
                    gain[(col * N) + i] = column[i];
                }
            }

            for (int i = 0; i < N; i++)
            {
                dx[i] = means[k + 1][i] - next.Predicted[i];
            }

            dx[HeadingRad] = Angles.WrapPi(dx[HeadingRad]);
            StateVector mean = step.Filtered;
            for (int i = 0; i < N; i++)
            {
                double sum = 0;
                for (int j = 0; j < N; j++)
                {
                    sum += gain[(i * N) + j] * dx[j];
                }

                mean[i] += sum;
            }

            mean[HeadingRad] = Angles.WrapPi(mean[HeadingRad]);

            StateMatrix dp = default;
            for (int i = 0; i < StateMatrix.Length; i++)
            {
                dp[i] = covariances[k + 1][i] - next.PredictedCovariance[i];
            }

            StateMatrix cov = step.FilteredCovariance;
            StateMatrix cdp = default;
            for (int i = 0; i < N; i++)
            {
                for (int j = 0; j < N; j++)
                {
                    double sum = 0;
                    for (int l = 0; l < N; l++)
                    {
                        sum += gain[(i * N) + l] * dp[(l * N) + j];
                    }

                    cdp[(i * N) + j] = sum;
                }
            }

            for (int i = 0; i < N; i++)
            {
                for (int j = 0; j < N; j++)
                {
                    double sum = 0;
                    for (int l = 0; l < N; l++)
                    {
                        sum += cdp[(i * N) + l] * gain[(j * N) + l];
                    }

                    cov[(i * N) + j] += sum;
                }
            }

            ExtendedKalmanFilter.Symmetrize(ref cov);
            means[k] = mean;
            covariances[k] = cov;
            gains[k] = gain;
        }

        return new SmoothedSegment(times, planes, means, covariances, gains);
    }
}
