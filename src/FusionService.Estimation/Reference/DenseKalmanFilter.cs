using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Reference;

/// <summary>
/// Linear Kalman filter on dense MathNet matrices of any size: the readable reference implementation that the
/// fixed-size, allocation-free filter is checked against. Speed is not a goal; clarity and round-off robustness are.
/// </summary>
/// <remarks>
/// Model: xₖ = F xₖ₋₁ + wₖ, wₖ ~ N(0, Q); zₖ = H xₖ + vₖ, vₖ ~ N(0, R), with white, mutually independent noises
/// (Kalman, "A New Approach to Linear Filtering and Prediction Problems", Trans. ASME J. Basic Engineering 82(1),
/// 1960). The update uses the Joseph form of the covariance (Bucy and Joseph 1968; from memory), and the
/// notation of Bar-Shalom, Li and Kirubarajan, "Estimation with Applications to Tracking and Navigation",
/// 2001, chapter 5 (the Kalman filter equations in section 5.2; section from memory).
/// Units are those of the state and measurement components; the filter itself is unit-agnostic.
/// </remarks>
public static class DenseKalmanFilter
{
    /// <summary>
    /// Time update (prediction): x̂ₖ|ₖ₋₁ = F x̂ₖ₋₁|ₖ₋₁ and Pₖ|ₖ₋₁ = F Pₖ₋₁|ₖ₋₁ Fᵀ + Q, symmetrised.
    /// </summary>
    /// <param name="prior">Estimate at the previous step, n states.</param>
    /// <param name="f">State transition matrix F, n x n, from the previous step to this one.</param>
    /// <param name="q">Process noise covariance Q, n x n, symmetric positive semi-definite (zero is allowed).</param>
    /// <returns>The predicted estimate; the inputs are not modified.</returns>
    /// <exception cref="ArgumentNullException">An argument is null.</exception>
    /// <exception cref="ArgumentException">Dimensions disagree or an input holds NaN or an infinity.</exception>
    public static GaussianEstimate Predict(GaussianEstimate prior, Matrix<double> f, Matrix<double> q)
    {
        DenseChecks.RequireEstimate(prior, nameof(prior));
        int n = prior.Mean.Count;
        DenseChecks.RequireShape(f, n, n, nameof(f));
        DenseChecks.RequireShape(q, n, n, nameof(q));
        DenseChecks.RequireFinite(f, nameof(f));
        DenseChecks.RequireFinite(q, nameof(q));

        var mean = f * prior.Mean;
        var covariance = DenseChecks.Symmetrized((f * prior.Covariance * f.Transpose()) + q);
        var predicted = new GaussianEstimate(mean, covariance);
        DenseChecks.RequireFiniteResult(predicted, "prediction");
        return predicted;
    }

    /// <summary>
    /// Measurement update in Joseph form:
    /// ν = z - H x̂, S = H P Hᵀ + R, K = P Hᵀ S⁻¹ (by a Cholesky solve with S, never an explicit inverse),
    /// x̂⁺ = x̂ + K ν, P⁺ = (I - K H) P (I - K H)ᵀ + K R Kᵀ (symmetrised), NIS = νᵀ S⁻¹ ν.
    /// </summary>
    /// <remarks>
    /// The Joseph form equals the short form (I - K H) P for the optimal gain but stays symmetric positive
    /// semi-definite under round-off and for any gain (Bucy and Joseph 1968; Bar-Shalom, Li and Kirubarajan 2001,
    /// section 5.2; both from memory). No gating is done here: every measurement is applied.
    /// </remarks>
    /// <param name="prior">Predicted estimate, n states.</param>
    /// <param name="z">Measurement, length m, in measurement units.</param>
    /// <param name="h">Measurement matrix H, m x n.</param>
    /// <param name="r">Measurement noise covariance R, m x m, symmetric positive semi-definite.</param>
    /// <returns>The posterior with the gain, innovation, innovation covariance and NIS.</returns>
    /// <exception cref="ArgumentNullException">An argument is null.</exception>
    /// <exception cref="ArgumentException">Dimensions disagree or an input holds NaN or an infinity.</exception>
    /// <exception cref="Filtering.FilterDivergenceException">S is not positive definite or the result is not finite.</exception>
    public static DenseUpdateResult Update(GaussianEstimate prior, Vector<double> z, Matrix<double> h, Matrix<double> r)
    {
        DenseChecks.RequireEstimate(prior, nameof(prior));
        ArgumentNullException.ThrowIfNull(z);
        int n = prior.Mean.Count;
        int m = z.Count;
        DenseChecks.RequireShape(h, m, n, nameof(h));
        DenseChecks.RequireShape(r, m, m, nameof(r));
        DenseChecks.RequireFinite(z, nameof(z));
        DenseChecks.RequireFinite(h, nameof(h));
        DenseChecks.RequireFinite(r, nameof(r));

        var p = prior.Covariance;
        var innovation = z - (h * prior.Mean);
        var hp = h * p;
        var s = DenseChecks.Symmetrized((hp * h.Transpose()) + r);
        var sFactor = DenseChecks.FactorPositiveDefinite(s, "innovation covariance S = H P Hᵀ + R");

        // S Kᵀ = H P, since (P Hᵀ)ᵀ = H P for a symmetric P.
        var gain = sFactor.Solve(hp).Transpose();
        double nis = innovation.DotProduct(sFactor.Solve(innovation));

        var mean = prior.Mean + (gain * innovation);
        var a = Matrix<double>.Build.DenseIdentity(n) - (gain * h);
        var covariance = DenseChecks.Symmetrized((a * p * a.Transpose()) + (gain * r * gain.Transpose()));
        var posterior = new GaussianEstimate(mean, covariance);
        DenseChecks.RequireFiniteResult(posterior, "measurement update");
        if (!double.IsFinite(nis))
        {
            throw new Filtering.FilterDivergenceException("normalised innovation squared is not finite");
        }

        return new DenseUpdateResult(posterior, gain, innovation, s, nis);
    }
}
