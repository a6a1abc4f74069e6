using FusionService.Estimation.LinearAlgebra;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Models;

/// <summary>
/// The time-correlated part of the GNSS position error as a first-order Gauss-Markov process per axis, carried in the
/// state (<see cref="StateIndex.GnssErrorEastM"/>, <see cref="StateIndex.GnssErrorNorthM"/>): a fix reads
/// position + correlated error + white noise.
/// </summary>
/// <remarks>
/// <para>
/// Receiver errors (atmospheric delays, orbit and clock errors, multipath) change over tens of seconds to minutes, so
/// successive fixes share most of their error; a filter that takes them as independent divides that error by the number
/// of fixes it averages and claims an accuracy it does not have. Augmenting the state with the coloured part of the
/// measurement noise is the classical remedy (Brown and Hwang, <i>Introduction to Random Signals and Applied Kalman
/// Filtering</i>, 4th ed. 2012, the Gauss-Markov process and state augmentation; from memory).
/// </para>
/// <para>
/// Continuous model de/dt = -e / τ + white noise, stationary variance σ². Exact discretisation over Δt:
/// e(t + Δt) = φ e(t) + w with φ = exp(-Δt / τ) and Var(w) = σ² (1 - φ²), which keeps the variance stationary (derived).
/// The stationary variance follows the receiver's reported accuracy: σ² = f σ_fix², where f is the correlated share of
/// the error variance (<see cref="NoiseProfile.GnssCorrelatedFraction"/>) and the remaining (1 - f) σ_fix² is the fix's
/// white noise. When a fix reports a larger accuracy than the process held, the difference is added to the error states'
/// variance as process noise (the process's marginal variance steps up with the receiver's own statement); a smaller
/// one lets the variance decay towards it at the process's own pace.
/// </para>
/// </remarks>
public static class GnssErrorModel
{
    /// <summary>Transition factor φ = exp(-Δt / τ) of one step.</summary>
    /// <param name="dtS">Step, seconds, non-negative.</param>
    /// <param name="timeConstantS">Correlation time τ, seconds, positive.</param>
    public static double TransitionFactor(double dtS, double timeConstantS) => Math.Exp(-dtS / timeConstantS);

    /// <summary>Variance of the driving noise of one step per unit stationary variance, 1 - φ².</summary>
    /// <param name="transitionFactor">φ of the step.</param>
    public static double DrivingVarianceFactor(double transitionFactor) => 1.0 - (transitionFactor * transitionFactor);

    /// <summary>
    /// Propagates the error states of <paramref name="x"/> over <paramref name="dtS"/> seconds (e ← φ e) and writes φ on
    /// their diagonal of the transition <paramref name="jacobian"/> (whose rows for them must be rows of the identity).
    /// </summary>
    public static void Predict(ref StateVector x, ref StateMatrix jacobian, double dtS, double timeConstantS)
    {
        double phi = TransitionFactor(dtS, timeConstantS);
        x[GnssErrorEastM] *= phi;
        x[GnssErrorNorthM] *= phi;
        jacobian[(GnssErrorEastM * StateMatrix.Size) + GnssErrorEastM] = phi;
        jacobian[(GnssErrorNorthM * StateMatrix.Size) + GnssErrorNorthM] = phi;
    }

    /// <summary>Adds the driving noise σ² (1 - φ²) of one step to the error states' variances.</summary>
    /// <param name="covariance">Covariance after F P Fᵀ.</param>
    /// <param name="dtS">Step, seconds.</param>
    /// <param name="timeConstantS">Correlation time τ, seconds.</param>
    /// <param name="stationaryVarianceM2">σ² per axis, square metres.</param>
    public static void AddProcessNoise(ref StateMatrix covariance, double dtS, double timeConstantS, double stationaryVarianceM2)
    {
        double q = stationaryVarianceM2 * DrivingVarianceFactor(TransitionFactor(dtS, timeConstantS));
        covariance[(GnssErrorEastM * StateMatrix.Size) + GnssErrorEastM] += q;
        covariance[(GnssErrorNorthM * StateMatrix.Size) + GnssErrorNorthM] += q;
    }
}
