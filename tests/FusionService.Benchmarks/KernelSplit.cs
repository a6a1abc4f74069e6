// Stopwatch split of the filter's covariance kernels, per call, on covariances the van day really produces.
using System.Diagnostics;
using System.Globalization;
using FusionService.Estimation.Filtering;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;

namespace FusionService.Benchmarks;

/// <summary>
/// Times single covariance kernels (<c>./build.sh bench kernel-split [repeats]</c>) over 16 states the forward filter
/// holds among the first 40,000 measurements of <see cref="VanDayScenario"/>, 200,000 calls each: the copy of a covariance alone (the
/// baseline every other line includes), the divergence guard's positive-definiteness test, the symmetrisation, the
/// prediction's P ← F P Fᵀ over 0.1 s, a scalar wheel-speed update and a two-row GNSS position update in Joseph form with
/// their guard, the same two updates rejected by the gate (their work up to the NIS), the test of a transition's
/// carried-over rows and the product A Fᵀ that relies on it. Best and median over the repeats of the mean per call,
/// nanoseconds.
/// </summary>
internal static class KernelSplit
{
    private const int N = StateMatrix.Size;
    private const int States = 40_000;
    private const int Working = 16;
    private const int Calls = 200_000;

    /// <summary>Runs the split and prints one line per kernel.</summary>
    /// <param name="repeats">Repeats of each kernel over all states (the first run is also a warm-up and counted).</param>
    public static void Run(int repeats)
    {
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        var covariances = new List<StateMatrix>(States);
        var means = new List<StateVector>(States);
        TrackState state = TrackState.Empty;
        foreach (Measurement m in VanDayScenario.Instance.Measurements)
        {
            if (state.Phase == TrackPhase.Running && m.TimeUs < state.TimeUs)
            {
                continue;
            }

            processor.Process(ref state, m);
            if (state.Phase == TrackPhase.Running)
            {
                covariances.Add(state.P);
                means.Add(state.X);
                if (covariances.Count == States)
                {
                    break;
                }
            }
        }

        // 16 states spread over the run, each used many times: their covariances and transitions stay in the first-level
        // cache (26 KB), as the one state of a track does, so the lines time the kernels and not memory traffic.
        StateMatrix[] p = new StateMatrix[Working];
        StateVector[] x = new StateVector[Working];
        for (int i = 0; i < Working; i++)
        {
            p[i] = covariances[i * (covariances.Count / Working)];
            x[i] = means[i * (covariances.Count / Working)];
        }

        var transitions = new StateMatrix[p.Length];
        for (int i = 0; i < p.Length; i++)
        {
            StateVector moved = x[i];
            CtraMotionModel.Predict(ref moved, 0.1, out transitions[i]);
            GnssErrorModel.Predict(ref moved, ref transitions[i], 0.1, NoiseProfile.DeliveryVan.GnssErrorTimeConstantS);
        }

        double sink = 0;
        var lines = new List<(string Name, List<double> Ns)>
        {
            ("copy of P alone (baseline)", []),
            ("positive-definiteness test", []),
            ("symmetrisation", []),
            ("P <- F P F^T (0.1 s)", []),
            ("wheel-speed update (m = 1) + guard", []),
            ("GNSS position update (m = 2) + guard", []),
            ("wheel-speed update gated (up to the NIS)", []),
            ("GNSS position update gated (up to the NIS)", []),
            ("test of F's carried-over rows", []),
            ("A F^T, F's rows 4 on diagonal", []),
        };

        double[] hWheel = new double[N];
        hWheel[StateIndex.SpeedMps] = 1.0;
        double[] rWheel = [0.05 * 0.05];
        double[] hFix = new double[2 * N];
        hFix[StateIndex.EastM] = 1.0;
        hFix[StateIndex.GnssErrorEastM] = 1.0;
        hFix[N + StateIndex.NorthM] = 1.0;
        hFix[N + StateIndex.GnssErrorNorthM] = 1.0;
        double[] rFix = [4.0, 0.0, 0.0, 4.0];
        for (int r = 0; r < repeats; r++)
        {
            lines[0].Ns.Add(Time(p, (ref StateMatrix c, int i) => sink += c[0]));
            lines[1].Ns.Add(Time(p, (ref StateMatrix c, int i) => sink += MatrixKernels.IsPositiveDefinite(c) ? 1 : 0));
            lines[2].Ns.Add(Time(p, (ref StateMatrix c, int i) =>
            {
                MatrixKernels.Symmetrize(ref c);
                sink += c[1];
            }));
            lines[3].Ns.Add(Time(p, (ref StateMatrix c, int i) =>
            {
                ExtendedKalmanFilter.PropagateCovariance(ref c, transitions[i]);
                sink += c[1];
            }));
            lines[4].Ns.Add(Time(p, (ref StateMatrix c, int i) =>
            {
                StateVector xi = x[i];
                ExtendedKalmanFilter.UpdateJosephGated(ref xi, ref c, [0.01], hWheel, rWheel, double.PositiveInfinity, out double nis);
                sink += c[1] + nis;
            }));
            lines[5].Ns.Add(Time(p, (ref StateMatrix c, int i) =>
            {
                StateVector xi = x[i];
                ExtendedKalmanFilter.UpdateJosephGated(ref xi, ref c, [0.5, -0.5], hFix, rFix, double.PositiveInfinity, out double nis);
                sink += c[1] + nis;
            }));
            lines[6].Ns.Add(Time(p, (ref StateMatrix c, int i) =>
            {
                StateVector xi = x[i];
                ExtendedKalmanFilter.UpdateJosephGated(ref xi, ref c, [0.01], hWheel, rWheel, double.NegativeInfinity, out double nis);
                sink += c[1] + nis;
            }));
            lines[7].Ns.Add(Time(p, (ref StateMatrix c, int i) =>
            {
                StateVector xi = x[i];
                ExtendedKalmanFilter.UpdateJosephGated(ref xi, ref c, [0.5, -0.5], hFix, rFix, double.NegativeInfinity, out double nis);
                sink += c[1] + nis;
            }));
            lines[8].Ns.Add(Time(p, (ref StateMatrix c, int i) => sink += CarriedOverTransitionProduct.Applies(transitions[i]) ? 1 : 0));
            lines[9].Ns.Add(Time(p, (ref StateMatrix c, int i) =>
            {
                CarriedOverTransitionProduct.Multiply(c, transitions[i], c);
                sink += c[1];
            }));
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"kernels over {Working} covariances of the van day, {Calls} calls each, {repeats} repeats (checksum {sink:G6})"));
        foreach ((string name, List<double> ns) in lines)
        {
            ns.Sort();
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"{name,-40} best {ns[0],7:F1} ns  median {ns[ns.Count / 2],7:F1} ns"));
        }
    }

    private delegate void Kernel(ref StateMatrix covariance, int index);

    /// <summary>Mean time per call of <paramref name="kernel"/> on a fresh copy of each covariance, nanoseconds.</summary>
    private static double Time(StateMatrix[] covariances, Kernel kernel)
    {
        var sw = Stopwatch.StartNew();
        for (int call = 0; call < Calls; call++)
        {
            int i = call % covariances.Length;
            StateMatrix copy = covariances[i];
            kernel(ref copy, i);
        }

        return sw.Elapsed.TotalMilliseconds * 1e6 / Calls;
    }
}
