using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Smoothing;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Distance travelled from RTS-smoothed states: the CTRA model's along-track increment over each step,
/// Δs(k) = v(k) τ + a(k) τ² / 2, summed over the interval. Integrating the smoothed speed, not the polyline of
/// positions, is what keeps GNSS wander at a standstill out of the distance. Meant for the dense instants of a
/// full-step replay (every measurement): over a long gap between instants the τ² term grows without bound (a small
/// smoothed acceleration across a ten-minute data gap adds kilometres), so sparse or gappy instants — the compacted
/// recording and stored data, as the service uses — go through <see cref="TrapezoidDistanceIntegrator"/>.
/// </summary>
/// <remarks>
/// The distance is linear in the smoothed states, D = Σ g(k)ᵀ x(k|N), so its variance needs the smoothed
/// cross-covariances Cov(x_k, x_j | N) = C(k) ... C(j-1) P(j|N) for j &gt; k (Rauch, Tung and Striebel 1965; the lag
/// form as in Shumway and Stoffer, Time Series Analysis, property 6.3, from memory). They are summed by the backward
/// recursion w(k) = C(k) [P(k+1|N) g(k+1) + w(k+1)], Var D = Σ g(k)ᵀ P(k|N) g(k) + 2 Σ g(k)ᵀ w(k), in O(N).
/// </remarks>
public static class DistanceIntegrator
{
    /// <summary>Speed at or below which a smoothed step counts as stationary, m/s.</summary>
    public const double StandstillSpeedMps = 0.05;

    private const int N = StateMatrix.Size;

    /// <summary>Distance over [<paramref name="fromUs"/>, <paramref name="toUs"/>] (Unix microseconds) across all segments.</summary>
    public static DistanceEstimate Integrate(IEnumerable<SmoothedSegment> segments, long fromUs, long toUs)
    {
        ArgumentNullException.ThrowIfNull(segments);
        if (toUs < fromUs)
        {
            throw new ArgumentException($"interval end {toUs} precedes its start {fromUs}", nameof(toUs));
        }

        double distance = 0, variance = 0, stationary = 0, covered = 0;
        foreach (SmoothedSegment segment in segments)
        {
            Integrate(segment, fromUs, toUs, ref distance, ref variance, ref stationary, ref covered);
        }

        return new DistanceEstimate(distance, Math.Sqrt(Math.Max(variance, 0)), stationary, covered);
    }

    private static void Integrate(
        SmoothedSegment s, long fromUs, long toUs, ref double distance, ref double variance, ref double stationary, ref double covered)
    {
        int count = s.Count;
        if (count < 2)
        {
            return;
        }

        // g(k) has two non-zero entries: coefficient of speed (τ1 - τ0) and of acceleration (τ1² - τ0²) / 2.
        var gv = new double[count];
        var ga = new double[count];
        for (int k = 0; k + 1 < count; k++)
        {
            long t0 = Math.Max(fromUs, s.TimesUs[k]);
            long t1 = Math.Min(toUs, s.TimesUs[k + 1]);
            if (t1 <= t0)
            {
                continue;
            }

            double tau0 = (t0 - s.TimesUs[k]) / 1e6, tau1 = (t1 - s.TimesUs[k]) / 1e6;
            gv[k] = tau1 - tau0;
            ga[k] = 0.5 * ((tau1 * tau1) - (tau0 * tau0));
            distance += (gv[k] * s.Means[k][SpeedMps]) + (ga[k] * s.Means[k][AccelMps2]);
            covered += gv[k];
            if (Math.Abs(s.Means[k][SpeedMps]) <= StandstillSpeedMps)
            {
                stationary += gv[k];
            }
        }

        Span<double> w = stackalloc double[N];
        Span<double> next = stackalloc double[N];
        w.Clear();
        for (int k = count - 1; k >= 0; k--)
        {
            ref readonly StateMatrix p = ref s.Covariances[k];
            if (gv[k] != 0 || ga[k] != 0)
            {
                double pgv = (gv[k] * p[(SpeedMps * N) + SpeedMps]) + (ga[k] * p[(SpeedMps * N) + AccelMps2]);
                double pga = (gv[k] * p[(AccelMps2 * N) + SpeedMps]) + (ga[k] * p[(AccelMps2 * N) + AccelMps2]);
                variance += (gv[k] * pgv) + (ga[k] * pga);
                variance += 2.0 * ((gv[k] * w[SpeedMps]) + (ga[k] * w[AccelMps2]));
            }

            if (k == 0)
            {
                break;
            }

            // w(k-1) = C(k-1) [P(k|N) g(k) + w(k)].
            for (int i = 0; i < N; i++)
            {
                next[i] = w[i] + (p[(i * N) + SpeedMps] * gv[k]) + (p[(i * N) + AccelMps2] * ga[k]);
            }

            ref readonly StateMatrix c = ref s.Gains[k - 1];
            for (int i = 0; i < N; i++)
            {
                double sum = 0;
                for (int j = 0; j < N; j++)
                {
                    sum += c[(i * N) + j] * next[j];
                }

                w[i] = sum;
            }
        }
    }
}
