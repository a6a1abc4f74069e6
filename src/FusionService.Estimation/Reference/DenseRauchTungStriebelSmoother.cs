using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Reference;

/// <summary>
/// Fixed-interval Rauch–Tung–Striebel smoother on dense MathNet matrices: the readable reference for the
/// smoothed estimates of a whole trajectory given all measurements z₀ … z_N.
/// </summary>
/// <remarks>
/// Rauch, Tung and Striebel, "Maximum likelihood estimates of linear dynamic systems", AIAA Journal 3(8), 1965.
/// Backward pass, for k = N - 1 down to 0:
/// Cₖ = Pₖ|ₖ Fₖ₊₁ᵀ Pₖ₊₁|ₖ⁻¹ (computed by a Cholesky solve with Pₖ₊₁|ₖ, never an explicit inverse),
/// x̂ₖ|N = x̂ₖ|ₖ + Cₖ (x̂ₖ₊₁|N - x̂ₖ₊₁|ₖ), Pₖ|N = Pₖ|ₖ + Cₖ (Pₖ₊₁|N - Pₖ₊₁|ₖ) Cₖᵀ.
/// The smoothed lag-one cross covariance Cov(xₖ, xₖ₊₁ | z₀ … z_N) = Cₖ Pₖ₊₁|N follows from the same Gaussian
/// conditioning (derived; the tests check it against the inverse information matrix of batch least squares).
/// Bar-Shalom, Li and Kirubarajan 2001 treat fixed-interval smoothing in chapter 8 (section from memory).
/// Units are those of the state; the smoother is unit-agnostic.
/// </remarks>
public static class DenseRauchTungStriebelSmoother
{
    /// <summary>Smoothed estimates x̂ₖ|N, Pₖ|N for k = 0 … N.</summary>
    /// <param name="filtered">Filtered estimates x̂ₖ|ₖ, Pₖ|ₖ for k = 0 … N (at least one).</param>
    /// <param name="predicted">
    /// Predicted estimates x̂ₖ|ₖ₋₁, Pₖ|ₖ₋₁ for the step from k - 1 to k; element 0 is not used and may be null.
    /// Pₖ|ₖ₋₁ must be positive definite for k ≥ 1.
    /// </param>
    /// <param name="transitions">Transition matrices Fₖ from k - 1 to k; element 0 is not used and may be null.</param>
    /// <returns>Smoothed estimates, same count as <paramref name="filtered"/>; element N equals the filtered one.</returns>
    /// <exception cref="ArgumentNullException">A list, or an element from index 1 on, is null.</exception>
    /// <exception cref="ArgumentException">Counts or dimensions disagree or an input holds NaN or an infinity.</exception>
    /// <exception cref="Filtering.FilterDivergenceException">A predicted covariance is not positive definite.</exception>
    public static IReadOnlyList<GaussianEstimate> Smooth(
        IReadOnlyList<GaussianEstimate> filtered,
        IReadOnlyList<GaussianEstimate?> predicted,
        IReadOnlyList<Matrix<double>?> transitions)
        => SmoothWithCrossCovariance(filtered, predicted, transitions).Estimates;

    /// <summary>
    /// Smoothed estimates and the smoothed lag-one cross covariances Cov(xₖ, xₖ₊₁ | z₀ … z_N) = Cₖ Pₖ₊₁|N, which a
    /// quantity depending on two neighbouring states (such as the distance between them) needs for its variance.
    /// </summary>
    /// <param name="filtered">Filtered estimates x̂ₖ|ₖ, Pₖ|ₖ for k = 0 … N (at least one).</param>
    /// <param name="predicted">Predicted estimates for the step from k - 1 to k; element 0 is not used and may be null.</param>
    /// <param name="transitions">Transition matrices Fₖ from k - 1 to k; element 0 is not used and may be null.</param>
    /// <returns>Smoothed estimates (N + 1) and cross covariances (N).</returns>
    /// <exception cref="ArgumentNullException">A list, or an element from index 1 on, is null.</exception>
    /// <exception cref="ArgumentException">Counts or dimensions disagree or an input holds NaN or an infinity.</exception>
    /// <exception cref="Filtering.FilterDivergenceException">A predicted covariance is not positive definite.</exception>
    public static SmoothedTrajectory SmoothWithCrossCovariance(
        IReadOnlyList<GaussianEstimate> filtered,
        IReadOnlyList<GaussianEstimate?> predicted,
        IReadOnlyList<Matrix<double>?> transitions)
    {
        ArgumentNullException.ThrowIfNull(filtered);
        ArgumentNullException.ThrowIfNull(predicted);
        ArgumentNullException.ThrowIfNull(transitions);
        int count = filtered.Count;
        if (count < 1 || predicted.Count != count || transitions.Count != count)
        {
            throw new ArgumentException(
                $"need at least one filtered estimate and equal counts: filtered {count}, predicted {predicted.Count}, transitions {transitions.Count}",
                nameof(filtered));
        }

        DenseChecks.RequireEstimate(filtered[0], "filtered[0]");
        int n = filtered[0].Mean.Count;
        for (int k = 1; k < count; k++)
        {
            DenseChecks.RequireEstimate(filtered[k], $"filtered[{k}]");
            DenseChecks.RequireEstimate(predicted[k]!, $"predicted[{k}]");
            DenseChecks.RequireShape(transitions[k]!, n, n, $"transitions[{k}]");
            DenseChecks.RequireFinite(transitions[k]!, $"transitions[{k}]");
            if (filtered[k].Mean.Count != n || predicted[k]!.Mean.Count != n)
            {
                throw new ArgumentException($"state dimension changes at step {k}", nameof(filtered));
            }
        }

        var smoothed = new GaussianEstimate[count];
        var cross = new Matrix<double>[count - 1];
        smoothed[count - 1] = filtered[count - 1];
        for (int k = count - 2; k >= 0; k--)
        {
            var current = filtered[k];
            var next = predicted[k + 1]!;
            var f = transitions[k + 1]!;
            var factor = DenseChecks.FactorPositiveDefinite(next.Covariance, $"predicted covariance P[{k + 1}|{k}]");

            // Pₖ₊₁|ₖ Cₖᵀ = Fₖ₊₁ Pₖ|ₖ, the transpose of the gain's definition for symmetric covariances.
            var gain = factor.Solve(f * current.Covariance).Transpose();
            var later = smoothed[k + 1];
            var mean = current.Mean + (gain * (later.Mean - next.Mean));
            var covariance = DenseChecks.Symmetrized(
                current.Covariance + (gain * (later.Covariance - next.Covariance) * gain.Transpose()));
            smoothed[k] = new GaussianEstimate(mean, covariance);
            cross[k] = gain * later.Covariance;
            DenseChecks.RequireFiniteResult(smoothed[k], $"smoothing step {k}");
        }

        return new SmoothedTrajectory(smoothed, cross);
    }
}
