using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Reference;

/// <summary>Fixed-interval smoothed estimates of a trajectory and the smoothed covariances between neighbours.</summary>
/// <param name="Estimates">Smoothed estimates x̂ₖ|N, Pₖ|N for k = 0 … N (same count and indexing as the filtered input).</param>
/// <param name="LagOneCrossCovariances">
/// Element k is the smoothed cross covariance Cov(xₖ, xₖ₊₁ | z₀ … z_N) = Cₖ Pₖ₊₁|N for k = 0 … N - 1 (one fewer
/// than <paramref name="Estimates"/>); element (i, j) pairs component i of xₖ with component j of xₖ₊₁.
/// </param>
public sealed record SmoothedTrajectory(
    IReadOnlyList<GaussianEstimate> Estimates,
    IReadOnlyList<Matrix<double>> LagOneCrossCovariances);
