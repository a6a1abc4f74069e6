using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Reference;

/// <summary>Everything a dense Kalman measurement update computes (see <see cref="DenseKalmanFilter.Update"/>).</summary>
/// <param name="Posterior">Updated estimate x̂⁺ = x̂ + K ν, P⁺ in Joseph form.</param>
/// <param name="Gain">Kalman gain K = P Hᵀ S⁻¹, n x m, in state units per measurement unit.</param>
/// <param name="Innovation">Innovation ν = z - H x̂, length m, in measurement units.</param>
/// <param name="InnovationCovariance">Innovation covariance S = H P Hᵀ + R, m x m, in squared measurement units.</param>
/// <param name="Nis">Normalised innovation squared νᵀ S⁻¹ ν, dimensionless; chi-square with m degrees of freedom for a consistent linear-Gaussian filter.</param>
public sealed record DenseUpdateResult(
    GaussianEstimate Posterior,
    Matrix<double> Gain,
    Vector<double> Innovation,
    Matrix<double> InnovationCovariance,
    double Nis);
