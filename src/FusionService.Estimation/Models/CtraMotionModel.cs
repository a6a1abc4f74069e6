using System.Numerics;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Models;

/// <summary>
/// Constant turn rate and acceleration (CTRA) motion of a planar vehicle, with its analytic Jacobian and a
/// linearised continuous-white-noise process covariance.
/// </summary>
/// <remarks>
/// Model: heading θ' = θ + ω T, speed v' = v + a T, and the position moves by
/// Δp = ∫₀ᵀ (v + a t) e^{i(θ + ω t)} dt (complex east + i north), the CTRA model compared by Schubert, Richter and
/// Wanielik (2008, "Comparison and evaluation of advanced motion models for vehicle tracking", FUSION).
/// Writing φ = ω T and f_n(φ) = ∫₀¹ s^(n-1) e^{iφ s} ds gives Δp = e^{iθ} T (v f₁ + a T f₂), with
/// f₁' = i f₂ and f₂' = i f₃; the functions are evaluated by their Taylor series for |φ| &lt; 0.25 and by
/// the recurrence f₁ = (e^{iφ} - 1)/(iφ), f_(n+1) = (e^{iφ} - n f_n)/(iφ) otherwise, so the yaw rate → 0 limit
/// (straight-line motion with constant acceleration) is exact and the Jacobian is smooth through it.
/// Gyro bias and wheel-speed scale are random walks.
/// </remarks>
public static class CtraMotionModel
{
    private const double SeriesThresholdRad = 0.25;
    private const int SeriesTerms = 16;

    /// <summary>1 / k for k = 0 .. SeriesTerms + 3 (entry 0 unused).</summary>
    private static readonly double[] Reciprocal = [.. Enumerable.Range(0, SeriesTerms + 4).Select(k => k == 0 ? 0.0 : 1.0 / k)];

    /// <summary>
    /// Propagates <paramref name="x"/> by <paramref name="dtS"/> seconds in place and writes the Jacobian
    /// ∂x'/∂x (evaluated at the prior state) into <paramref name="jacobian"/>. Heading is wrapped to (-π, π].
    /// </summary>
    /// <param name="x">State, changed in place.</param>
    /// <param name="dtS">Time step, seconds, finite and non-negative.</param>
    /// <param name="jacobian">Receives the 8 x 8 transition Jacobian F.</param>
    public static void Predict(ref StateVector x, double dtS, out StateMatrix jacobian)
    {
        jacobian = default;
        for (int i = 0; i < StateMatrix.Size; i++)
        {
            jacobian[(i * StateMatrix.Size) + i] = 1.0;
        }

        double theta = x[HeadingRad], v = x[SpeedMps], omega = x[YawRateRps], a = x[AccelMps2];
        double t = dtS;
        ShapeFunctions(omega * t, out Complex f1, out Complex f2, out Complex f3);
        var rotation = new Complex(Math.Cos(theta), Math.Sin(theta));
        Complex delta = rotation * t * ((v * f1) + (a * t * f2));
        Complex dDeltaDv = rotation * t * f1;
        Complex dDeltaDa = rotation * t * t * f2;
        Complex dDeltaDOmega = rotation * t * t * Complex.ImaginaryOne * ((v * f2) + (a * t * f3));
        Complex dDeltaDTheta = Complex.ImaginaryOne * delta;

        x[EastM] += delta.Real;
        x[NorthM] += delta.Imaginary;
        x[HeadingRad] = Angles.WrapPi(theta + (omega * t));
        x[SpeedMps] = v + (a * t);

        const int n = StateMatrix.Size;
        jacobian[(EastM * n) + HeadingRad] = dDeltaDTheta.Real;
        jacobian[(NorthM * n) + HeadingRad] = dDeltaDTheta.Imaginary;
        jacobian[(EastM * n) + SpeedMps] = dDeltaDv.Real;
        jacobian[(NorthM * n) + SpeedMps] = dDeltaDv.Imaginary;
        jacobian[(EastM * n) + YawRateRps] = dDeltaDOmega.Real;
        jacobian[(NorthM * n) + YawRateRps] = dDeltaDOmega.Imaginary;
        jacobian[(EastM * n) + AccelMps2] = dDeltaDa.Real;
        jacobian[(NorthM * n) + AccelMps2] = dDeltaDa.Imaginary;
        jacobian[(HeadingRad * n) + YawRateRps] = t;
        jacobian[(SpeedMps * n) + AccelMps2] = t;
    }

    /// <summary>
    /// Adds the discrete process noise of one step of <paramref name="dtS"/> seconds, linearised at the prior
    /// state <paramref name="x"/>, to <paramref name="covariance"/>.
    /// </summary>
    /// <remarks>
    /// Longitudinal jerk drives the chain (along-track distance, speed, acceleration) and yaw acceleration drives
    /// (lateral distance / v, heading, yaw rate); each chain gets the exact covariance of a triple integrator of
    /// continuous white noise, q [[T⁵/20, T⁴/8, T³/6], [T⁴/8, T³/3, T²/2], [T³/6, T²/2, T]]
    /// (Bar-Shalom, Li and Kirubarajan 2001, section 6.2, white-noise jerk model; section from memory), mapped to
    /// east/north through the heading. Both blocks are positive semi-definite by construction.
    /// </remarks>
    /// <param name="covariance">Covariance to add to (the predicted F P Fᵀ).</param>
    /// <param name="x">Prior state at which the noise is linearised.</param>
    /// <param name="dtS">Time step, seconds.</param>
    /// <param name="profile">Noise densities.</param>
    /// <param name="stationary">When true the position random walk is switched off (a parked vehicle does not slip).</param>
    public static void AddProcessNoise(ref StateMatrix covariance, in StateVector x, double dtS, NoiseProfile profile, bool stationary)
    {
        double t = dtS, t2 = t * t, t3 = t2 * t, t4 = t3 * t, t5 = t4 * t;
        double c = Math.Cos(x[HeadingRad]), s = Math.Sin(x[HeadingRad]), v = x[SpeedMps];
        const int n = StateMatrix.Size;

        double qj = profile.JerkDensityM2PerS5;
        AddChain(ref covariance, c, s, 1.0, SpeedMps, AccelMps2, qj, t, t2, t3, t4, t5);

        double qa = profile.YawAccelDensityRad2PerS3;
        AddChain(ref covariance, -s, c, v, HeadingRad, YawRateRps, qa, t, t2, t3, t4, t5);

        double qp = stationary ? 0.0 : profile.PositionDensityM2PerS * t;
        covariance[(EastM * n) + EastM] += qp;
        covariance[(NorthM * n) + NorthM] += qp;
        covariance[(GyroBiasRps * n) + GyroBiasRps] += profile.GyroBiasDensityRad2PerS3 * t;
        covariance[(WheelScale * n) + WheelScale] += profile.WheelScaleDensityPerS * t;
    }

    private static void AddChain(
        ref StateMatrix p, double ux, double uy, double gain, int first, int second, double q,
        double t, double t2, double t3, double t4, double t5)
    {
        const int n = StateMatrix.Size;
        double pp = q * gain * gain * t5 / 20.0;
        double p1 = q * gain * t4 / 8.0;
        double p2 = q * gain * t3 / 6.0;
        p[(EastM * n) + EastM] += pp * ux * ux;
        p[(EastM * n) + NorthM] += pp * ux * uy;
        p[(NorthM * n) + EastM] += pp * ux * uy;
        p[(NorthM * n) + NorthM] += pp * uy * uy;
        AddSymmetric(ref p, EastM, first, p1 * ux);
        AddSymmetric(ref p, NorthM, first, p1 * uy);
        AddSymmetric(ref p, EastM, second, p2 * ux);
        AddSymmetric(ref p, NorthM, second, p2 * uy);
        p[(first * n) + first] += q * t3 / 3.0;
        AddSymmetric(ref p, first, second, q * t2 / 2.0);
        p[(second * n) + second] += q * t;
    }

    private static void AddSymmetric(ref StateMatrix p, int i, int j, double value)
    {
        p[(i * StateMatrix.Size) + j] += value;
        p[(j * StateMatrix.Size) + i] += value;
    }

    /// <summary>f₁, f₂, f₃ of the remarks: f_n(φ) = ∫₀¹ s^(n-1) e^{iφ s} ds.</summary>
    internal static void ShapeFunctions(double phi, out Complex f1, out Complex f2, out Complex f3)
    {
        if (Math.Abs(phi) < SeriesThresholdRad)
        {
            // f_n = Σ_k (iφ)^k / (k! (k + n)); the terms fall below 1e-18 of the first within 14 steps at |φ| < 0.25,
            // and much sooner at the usual |φ| ~ 0.05, so the sum stops once a term no longer matters.
            double re1 = 0, im1 = 0, re2 = 0, im2 = 0, re3 = 0, im3 = 0;
            double termRe = 1.0, termIm = 0.0;
            for (int k = 0; k < SeriesTerms; k++)
            {
                double a1 = Reciprocal[k + 1], a2 = Reciprocal[k + 2], a3 = Reciprocal[k + 3];
                re1 += termRe * a1;
                im1 += termIm * a1;
                re2 += termRe * a2;
                im2 += termIm * a2;
                re3 += termRe * a3;
                im3 += termIm * a3;
                if (Math.Abs(termRe) + Math.Abs(termIm) < 1e-18)
                {
                    break;
                }

                // term ← term · iφ / (k + 1)
                double scale = phi * Reciprocal[k + 1];
                (termRe, termIm) = (-termIm * scale, termRe * scale);
            }

            f1 = new Complex(re1, im1);
            f2 = new Complex(re2, im2);
            f3 = new Complex(re3, im3);
            return;
        }

        var e = new Complex(Math.Cos(phi), Math.Sin(phi));
        var iphi = new Complex(0.0, phi);
        f1 = (e - 1.0) / iphi;
        f2 = (e - f1) / iphi;
        f3 = (e - (2.0 * f2)) / iphi;
    }
}
