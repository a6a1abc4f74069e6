using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Distance travelled from RTS-smoothed states by the trapezoidal rule on the smoothed speed: between consecutive
/// smoothed instants the speed is taken as linear, so D = Σ τ(k) [v(k) + v(k+1)] / 2 (partial intervals at the window
/// edges by the same linear interpolation). Unlike <see cref="DistanceIntegrator"/>, which carries the CTRA increment
/// v τ + a τ² / 2 from each instant, it stays bounded over long gaps between instants (a van parked with no data for
/// ten minutes, where a small smoothed acceleration times τ² would add kilometres), which is what the sparse instants of
/// <see cref="CompactingStepRecorder"/> and stored data with gaps need.
/// </summary>
/// <remarks>
/// D is linear in the smoothed states, D = Σ g(k)ᵀ x(k|N) with g(k) non-zero only in the speed component, so its
/// variance follows from the smoothed covariances and the lag cross-covariances Cov(x(k), x(j) | N) = C(k) ... C(j-1)
/// P(j|N) (Rauch, Tung and Striebel 1965; lag form as in Shumway and Stoffer, Time Series Analysis, property 6.3, from
/// memory), summed in O(N) by the backward recursion w(k) = C(k) [P(k+1|N) g(k+1) + w(k+1)],
/// Var D = Σ g(k)ᵀ P(k|N) g(k) + 2 Σ g(k)ᵀ w(k), as in <see cref="DistanceIntegrator"/>. With the compacted recording
/// C(k) is the chained gain G(k) of the link (see <see cref="CompactingStepRecorder"/>).
/// </remarks>
public static class TrapezoidDistanceIntegrator
{
    /// <summary>Links between smoothed instants longer than this are integrated as chords, seconds.</summary>
    public const double GapS = 2.0;

    private const int N = StateMatrix.Size;

    /// <summary>Distance over [<paramref name="fromUs"/>, <paramref name="toUs"/>] (Unix microseconds) across all segments; gaps between segments count nothing.</summary>
    /// <exception cref="ArgumentException"><paramref name="toUs"/> precedes <paramref name="fromUs"/>.</exception>
    public static DistanceEstimate Integrate(IEnumerable<SmoothedSegment> segments, long fromUs, long toUs) =>
        Integrate(segments, fromUs, toUs, []);

    /// <summary>
    /// As <see cref="Integrate(IEnumerable{SmoothedSegment}, long, long)"/>, and the part of the distance covered while
    /// the vehicle was carried: each link between smoothed instants counts as carried when its middle lies in one of
    /// <paramref name="carried"/> (a carry starts a new smoothing segment, so links rarely straddle its start).
    /// </summary>
    public static DistanceEstimate Integrate(IEnumerable<SmoothedSegment> segments, long fromUs, long toUs, IReadOnlyList<CarriedInterval> carried)
    {
        ArgumentNullException.ThrowIfNull(carried);
        ArgumentNullException.ThrowIfNull(segments);
        if (toUs < fromUs)
        {
            throw new ArgumentException($"interval end {toUs} precedes its start {fromUs}", nameof(toUs));
        }

        double distance = 0, variance = 0, stationary = 0, covered = 0, carriedM = 0;
        foreach (SmoothedSegment segment in segments)
        {
            Integrate(segment, fromUs, toUs, carried, ref distance, ref variance, ref stationary, ref covered, ref carriedM);
        }

        return new DistanceEstimate(distance, Math.Sqrt(Math.Max(variance, 0)), stationary, covered, carriedM);
    }

    private static bool InAny(IReadOnlyList<CarriedInterval> intervals, long timeUs)
    {
        for (int i = 0; i < intervals.Count; i++)
        {
            if (intervals[i].Contains(timeUs))
            {
                return true;
            }
        }

        return false;
    }

    private static void Integrate(
        SmoothedSegment s, long fromUs, long toUs, IReadOnlyList<CarriedInterval> carried,
        ref double distance, ref double variance, ref double stationary, ref double covered, ref double carriedM)
    {
        int count = s.Count;
        if (count < 2)
        {
            return;
        }

        // g(k): coefficients of speed, east and north of instant k, from the interval before it and the one after it.
        var gv = new double[count];
        var ge = new double[count];
        var gn = new double[count];
        for (int k = 0; k + 1 < count; k++)
        {
            long t0 = Math.Max(fromUs, s.TimesUs[k]);
            long t1 = Math.Min(toUs, s.TimesUs[k + 1]);
            long span = s.TimesUs[k + 1] - s.TimesUs[k];
            if (t1 <= t0 || span <= 0)
            {
                continue;
            }

            double tau = span / 1e6;
            double u0 = (t0 - s.TimesUs[k]) / (double)span, u1 = (t1 - s.TimesUs[k]) / (double)span;
            double partS = (t1 - t0) / 1e6;
            covered += partS;
            bool isCarried = carried.Count > 0 && InAny(carried, t0 + ((t1 - t0) / 2));
            double before = distance;
            if (tau > GapS)
            {
                // Chord: k+1's position in k's plane.
                double e1 = s.Means[k + 1][EastM], n1 = s.Means[k + 1][NorthM];
                if (!SamePlane(s.Planes[k], s.Planes[k + 1]))
                {
                    var state = new Tracking.TrackState { X = s.Means[k + 1], Plane = s.Planes[k + 1], HasPlane = true };
                    var there = s.Planes[k].ToEnu(Tracking.TrackProcessor.PositionOf(state));
                    e1 = there.EastM;
                    n1 = there.NorthM;
                }

                double de = e1 - s.Means[k][EastM], dn = n1 - s.Means[k][NorthM];
                double chord = Math.Sqrt((de * de) + (dn * dn));
                double fraction = u1 - u0;
                distance += fraction * chord;
                if (chord > 0)
                {
                    double ue = fraction * de / chord, un = fraction * dn / chord;
                    ge[k] -= ue;
                    gn[k] -= un;
                    ge[k + 1] += ue;
                    gn[k + 1] += un;
                }

                if (chord / tau <= DistanceIntegrator.StandstillSpeedMps)
                {
                    stationary += partS;
                }

                carriedM += isCarried ? distance - before : 0;
                continue;
            }

            double half = 0.5 * ((u1 * u1) - (u0 * u0));
            double wk = tau * ((u1 - u0) - half), wk1 = tau * half;
            gv[k] += wk;
            gv[k + 1] += wk1;
            double vk = s.Means[k][SpeedMps], vk1 = s.Means[k + 1][SpeedMps];
            distance += (wk * vk) + (wk1 * vk1);
            carriedM += isCarried ? distance - before : 0;
            if (Math.Abs(vk) <= DistanceIntegrator.StandstillSpeedMps && Math.Abs(vk1) <= DistanceIntegrator.StandstillSpeedMps)
            {
                stationary += partS;
            }
        }

        Span<double> w = stackalloc double[N];
        Span<double> next = stackalloc double[N];
        w.Clear();
        for (int k = count - 1; k >= 0; k--)
        {
            ref readonly StateMatrix p = ref s.Covariances[k];
            if (gv[k] != 0 || ge[k] != 0 || gn[k] != 0)
            {
                double pv = (p[(SpeedMps * N) + SpeedMps] * gv[k]) + (p[(SpeedMps * N) + EastM] * ge[k]) + (p[(SpeedMps * N) + NorthM] * gn[k]);
                double pe = (p[(EastM * N) + SpeedMps] * gv[k]) + (p[(EastM * N) + EastM] * ge[k]) + (p[(EastM * N) + NorthM] * gn[k]);
                double pn = (p[(NorthM * N) + SpeedMps] * gv[k]) + (p[(NorthM * N) + EastM] * ge[k]) + (p[(NorthM * N) + NorthM] * gn[k]);
                variance += (gv[k] * pv) + (ge[k] * pe) + (gn[k] * pn);
                variance += 2.0 * ((gv[k] * w[SpeedMps]) + (ge[k] * w[EastM]) + (gn[k] * w[NorthM]));
            }

            if (k == 0)
            {
                break;
            }

            // w(k-1) = C(k-1) [P(k|N) g(k) + w(k)].
            for (int i = 0; i < N; i++)
            {
                next[i] = w[i] + (p[(i * N) + SpeedMps] * gv[k]) + (p[(i * N) + EastM] * ge[k]) + (p[(i * N) + NorthM] * gn[k]);
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

    private static bool SamePlane(in Geodesy.LocalTangentPlane a, in Geodesy.LocalTangentPlane b) => a.Anchor == b.Anchor;
}
