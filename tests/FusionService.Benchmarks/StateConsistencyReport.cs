// NEES of the motion states a vehicle's state endpoint reports with standard deviations: heading, speed, yaw rate, ...
using System.Globalization;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Benchmarks;

/// <summary>
/// `./build.sh bench state-nees [runs, default 16] [yaw-acceleration density, rad²/s³, default the profile's]`: over the clean-sky drives of <see cref="RealisticDrives"/> with the
/// default options, at the first state of each whole second while the truth moves faster than 3 m/s, the mean NEES of
/// each motion state alone (1 when consistent; Bar-Shalom, Li and Kirubarajan 2001) and how often the truth lay inside
/// its 95 % interval (±1.96 σ, chi-square 1 dof 3.841; NIST/SEMATECH handbook 1.3.6.7.4), filtered and smoothed; and the
/// heading split by the truth's yaw rate (straight road below 0.02 rad/s, turns above).
/// </summary>
internal static class StateConsistencyReport
{
    private const double Inside95OneDof = 3.841458820694124;
    private const double MovingMps = 3.0;
    private const double TurningRps = 0.02;

    public static void Run(int runs, double? yawAccelDensityRad2PerS3 = null)
    {
        NoiseProfile profile = NoiseProfile.DeliveryVan with
        {
            YawAccelDensityRad2PerS3 = yawAccelDensityRad2PerS3 ?? NoiseProfile.DeliveryVan.YawAccelDensityRad2PerS3,
        };
        var processor = new TrackProcessor(new TrackOptions(), profile);
        int[] states = [HeadingRad, SpeedMps, YawRateRps, GyroBiasRps, WheelScale];
        string[] names = ["heading", "speed", "yaw rate", "gyro bias", "wheel scale"];
        var filtered = new Tally[states.Length];
        var smoothed = new Tally[states.Length];
        var headingStraight = new Tally();
        var headingTurning = new Tally();
        for (int k = 0; k < states.Length; k++)
        {
            filtered[k] = new Tally();
            smoothed[k] = new Tally();
        }

        for (int r = 0; r < runs; r++)
        {
            ScenarioRun run = RealisticDrives.CleanSky(1201 + (r * 100)).Generate();
            ReplayResult replay = TrackReplay.Run(processor, TrackState.Empty, run.Measurements);
            var seconds = new HashSet<long>();
            foreach (IReadOnlyList<ForwardStep> segment in replay.Forward)
            {
                foreach (ForwardStep step in segment)
                {
                    if (!Moving(run, step.TimeUs, seconds, out StateVector truth))
                    {
                        continue;
                    }

                    for (int k = 0; k < states.Length; k++)
                    {
                        filtered[k].Add(Error(step.Filtered, truth, states[k]), step.FilteredCovariance[(states[k] * StateMatrix.Size) + states[k]]);
                    }

                    var heading = Math.Abs(truth[YawRateRps]) < TurningRps ? headingStraight : headingTurning;
                    heading.Add(Error(step.Filtered, truth, HeadingRad), step.FilteredCovariance[(HeadingRad * StateMatrix.Size) + HeadingRad]);
                }
            }

            seconds.Clear();
            foreach (SmoothedSegment segment in replay.Smoothed)
            {
                for (int j = 0; j < segment.Count; j++)
                {
                    if (!Moving(run, segment.TimesUs[j], seconds, out StateVector truth))
                    {
                        continue;
                    }

                    for (int k = 0; k < states.Length; k++)
                    {
                        smoothed[k].Add(Error(segment.Means[j], truth, states[k]), segment.Covariances[j][(states[k] * StateMatrix.Size) + states[k]]);
                    }
                }
            }
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"{runs} clean-sky drives, yaw-acceleration density {profile.YawAccelDensityRad2PerS3} rad²/s³, states while moving faster than {MovingMps} m/s"));
        for (int k = 0; k < states.Length; k++)
        {
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{names[k],-12} filtered NEES {filtered[k].Nees,6:F2}, inside 95 % {filtered[k].Inside * 100,5:F1} %   smoothed NEES {smoothed[k].Nees,6:F2}, inside 95 % {smoothed[k].Inside * 100,5:F1} %"));
        }

        foreach ((string label, Tally t) in new[] { ("straight", headingStraight), ("turning", headingTurning) })
        {
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"heading, {label,-8} filtered NEES {t.Nees,6:F2}, rms error {t.RmsError * 180 / Math.PI:F2} deg, mean stated sd {t.MeanSd * 180 / Math.PI:F2} deg, {t.Count} s"));
        }
    }

    private static bool Moving(ScenarioRun run, long timeUs, HashSet<long> seconds, out StateVector truth)
    {
        truth = default;
        if (!run.Truth.Covers(timeUs) || !seconds.Add(timeUs / 1_000_000))
        {
            return false;
        }

        truth = run.TrueStateAt(timeUs);
        return truth[SpeedMps] > MovingMps;
    }

    private static double Error(in StateVector estimate, in StateVector truth, int state) =>
        state == HeadingRad ? Angles.WrapPi(estimate[state] - truth[state]) : estimate[state] - truth[state];

    private sealed class Tally
    {
        private double _nees, _squares, _sd;
        private long _inside;

        public long Count { get; private set; }

        public double Nees => _nees / Math.Max(1, Count);

        public double Inside => (double)_inside / Math.Max(1, Count);

        public double RmsError => Math.Sqrt(_squares / Math.Max(1, Count));

        public double MeanSd => _sd / Math.Max(1, Count);

        public void Add(double error, double variance)
        {
            double d2 = error * error / variance;
            Count++;
            _nees += d2;
            _inside += d2 <= Inside95OneDof ? 1 : 0;
            _squares += error * error;
            _sd += Math.Sqrt(variance);
        }
    }
}
