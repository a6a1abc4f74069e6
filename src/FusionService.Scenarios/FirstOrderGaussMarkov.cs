// Exact discretisation of a first-order Gauss-Markov process.
namespace FusionService.Scenarios;

/// <summary>
/// The first-order Gauss-Markov process x' = -x / τ + w: stationary variance σ², autocorrelation σ² exp(-|Δt| / τ),
/// sampled exactly over a step Δt as x(k+1) = φ x(k) + w(k) with φ = exp(-Δt / τ) and Var w = σ² (1 - φ²).
/// </summary>
/// <remarks>
/// Brown and Hwang, Introduction to Random Signals and Applied Kalman Filtering, 4th ed. 2012, the chapter on the
/// Gauss-Markov process (from memory); the driving variance σ² (1 - φ²) is derived: it keeps Var x(k+1) = Var x(k) = σ².
/// Check value: τ = 45 s, Δt = 1 s gives φ = 0.978023 and q / σ² = 0.043471 (derived).
/// </remarks>
public static class FirstOrderGaussMarkov
{
    /// <summary>Transition factor φ = exp(-Δt / τ), in (0, 1] for Δt ≥ 0.</summary>
    /// <param name="stepS">Step Δt, seconds, finite and non-negative.</param>
    /// <param name="tauS">Time constant τ, seconds, finite and positive.</param>
    public static double Phi(double stepS, double tauS)
    {
        Check(stepS, tauS);
        return Math.Exp(-stepS / tauS);
    }

    /// <summary>Driving-noise variance over the step divided by the stationary variance: q / σ² = 1 - φ² (computed as -expm1(-2Δt / τ)).</summary>
    /// <param name="stepS">Step Δt, seconds, finite and non-negative.</param>
    /// <param name="tauS">Time constant τ, seconds, finite and positive.</param>
    public static double DrivingVarianceRatio(double stepS, double tauS)
    {
        Check(stepS, tauS);
        return -double.ExpM1(-2.0 * stepS / tauS);
    }

    private static void Check(double stepS, double tauS)
    {
        if (!double.IsFinite(stepS) || stepS < 0)
        {
            throw new ArgumentOutOfRangeException(nameof(stepS), stepS, "step must be finite and non-negative");
        }

        if (!double.IsFinite(tauS) || tauS <= 0)
        {
            throw new ArgumentOutOfRangeException(nameof(tauS), tauS, "time constant must be finite and positive");
        }
    }
}
