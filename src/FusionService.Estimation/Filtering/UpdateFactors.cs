using System.Runtime.CompilerServices;

namespace FusionService.Estimation.Filtering;

/// <summary>
/// The factors of one applied measurement update that a fixed-point smoother needs to carry the update over to an
/// earlier state without inverting the predicted covariance. With S = H P Hᵀ + R = L Lᵀ (Cholesky):
/// <see cref="Whitened"/> w = L⁻¹ ν, <see cref="Information"/> W = Hᵀ L⁻ᵀ and <see cref="Gain"/> B = P Hᵀ L⁻ᵀ, so that
/// the gain is K = B L⁻¹, the state moves by K ν = B w and the covariance by -K H P = -B Bᵀ.
/// </summary>
/// <remarks>
/// For a state x(r) earlier than the updated one with cross-covariance Σ = Cov(x(r), x), the same update moves
/// E[x(r)] by Σ Hᵀ S⁻¹ ν = (Σ W) w, Cov(x(r)) by -(Σ W)(Σ W)ᵀ and Σ to Σ - (Σ W) Bᵀ: the fixed-point smoother of
/// Meditch (1969), <i>Stochastic Optimal Linear Estimation and Control</i>, chapter 5, written with the filter's own
/// Cholesky factor (from memory). <see cref="Smoothing.CompactingStepRecorder"/> folds forward steps this way.
/// </remarks>
public struct UpdateFactors
{
    /// <summary>Measurement dimension m (1 to <see cref="ExtendedKalmanFilter.MaxMeasurementDimension"/>).</summary>
    public int Dimension;

    /// <summary>w = L⁻¹ ν, length m.</summary>
    public Column3 Whitened;

    /// <summary>W = Hᵀ L⁻ᵀ, n x m row-major (element (i, a) at i * m + a).</summary>
    public StateBlock3 Information;

    /// <summary>B = P Hᵀ L⁻ᵀ with the covariance before the update, n x m row-major (element (i, a) at i * m + a).</summary>
    public StateBlock3 Gain;

    /// <summary>Up to three doubles inline.</summary>
    [InlineArray(ExtendedKalmanFilter.MaxMeasurementDimension)]
    public struct Column3
    {
        private double _element0;
    }

    /// <summary>Up to n x 3 doubles inline (n = <see cref="Models.StateIndex.Count"/>).</summary>
    [InlineArray(Models.StateIndex.Count * ExtendedKalmanFilter.MaxMeasurementDimension)]
    public struct StateBlock3
    {
        private double _element0;
    }
}
