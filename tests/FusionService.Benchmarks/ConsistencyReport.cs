// Monte Carlo consistency of the filter on realistic GNSS error: containment, NEES, RMSE, gating and resets.
using System.Diagnostics;
using System.Globalization;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Benchmarks;

/// <summary>
/// `./build.sh bench consistency [runs, default 64] [faulty | text] [fitted | fixed | matched | learned | fleet] [rounds 1-10, default 3]` (text: only the
/// cases whose label contains it, "" for all; fitted: with <see cref="NoiseProfile.GnssErrorIdentification"/> on, the
/// default; fixed: with it off; matched: each cell of the receiver grid filtered with that receiver's own share and time
/// constant, as a fleet that sets section <c>GnssErrorModel</c> to its receivers' values; learned: each drive of the
/// receiver grid starts with the fit its track made over <c>rounds</c> earlier rounds of the same receiver,
/// as a van's track carries it from day to day; fleet: each drive of the receiver grid is a new van's first round, its
/// fit starting from the median of what <see cref="FleetVans"/> other vans with the same receiver fitted over
/// <c>rounds</c> rounds each, as the service starts a vehicle it has not seen): runs the filter with its default options and noise profile over the realistic
/// drives of <see cref="RealisticDrives"/> (clean sky, multipath, outage, tow, park beside a building, HDOP-only) and over
/// a grid of GNSS error correlation times (20, 60, 120 s) and correlated shares (50, 80, 95 %) of the clean-sky drive,
/// each with <c>runs</c> seeds, and prints per case: how often the truth lies inside the 95 % ellipse of the filtered
/// and of the smoothed position (at every whole second the track has a state), the mean position NEES (2 for a
/// consistent filter; Bar-Shalom, Li and Kirubarajan 2001), horizontal RMSE of raw fixes, filtered and smoothed
/// positions, the same filter's RMSE on the GNSS fixes and velocities alone (the baseline the issue asks to beat), the
/// share of fixes outside multipath that were gated, the jumps gated (+ those held before the track started and not
/// started from: a start needs two fixes that agree), and the track resets.
/// </summary>
internal static class ConsistencyReport
{
    // Upper 5 % point of chi-square with 2 dof, -2 ln 0.05 (NIST/SEMATECH handbook 1.3.6.7.4; derived).
    private const double Inside95 = 5.991464547107979;

    /// <summary>Earlier half-hour rounds of the same receiver whose fit a drive of the grid starts from in the learned mode, by default.</summary>
    public const int LearnedDrives = 3;

    /// <summary>Vans of the fleet whose fits, after <see cref="LearnedDrives"/> rounds each, give a new van's start in the fleet mode.</summary>
    public const int FleetVans = 8;

    public static void Run(int runs, bool onlyFaultyStreams = false, string? onlyCases = null, string? mode = null, int earlierRounds = LearnedDrives)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(earlierRounds, 1);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(earlierRounds, 10);
        _onlyCases = onlyCases;
        if (mode is not (null or "" or "fitted" or "fixed" or "matched" or "learned" or "fleet"))
        {
            throw new ArgumentException($"mode '{mode}' is none of fitted, fixed, matched, learned, fleet", nameof(mode));
        }

        bool matched = mode == "matched", learned = mode == "learned", fleet = mode == "fleet";
        bool fit = mode switch
        {
            "fixed" => false,
            "fitted" or "learned" or "fleet" => true,
            _ => NoiseProfile.DeliveryVan.GnssErrorIdentification,
        };
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan with { GnssErrorIdentification = fit });
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"filter defaults: correlated share {processor.Profile.GnssCorrelatedFraction}, time constant {processor.Profile.GnssErrorTimeConstantS} s, fitted per receiver: {processor.Profile.GnssErrorIdentification}{(matched ? "; the grid's cells with the receiver's own values" : "")}{(learned ? $"; the grid's drives start from the fit of {earlierRounds} earlier rounds of their receiver" : "")}{(fleet ? $"; the grid's drives start from the median fit of {FleetVans} other vans after {earlierRounds} rounds each" : "")}; {runs} seeds per case"));
        Console.WriteLine("case                         in95 filtered   in95 smoothed  NEES filt  NEES smooth  RMSE raw  filt  smooth  GNSS-only (m)  clean fixes gated  jumps gated  resets  isolated (drives, first after)  fitted f / tau (median of drives' final)");
        if (onlyFaultyStreams)
        {
            ReportFaultyStreams(processor, runs);
            return;
        }

        foreach (string name in new[] { "clean-sky", "multipath", "outage", "tow", "park-3h", "hdop-only" })
        {
            Report(name, processor, Enumerable.Range(0, runs).Select(r => RealisticDrives.All(r * 100).Single(d => d.Name == name)));
        }

        foreach (double tauS in new[] { 20.0, 60.0, 120.0 })
        {
            foreach (double share in new[] { 0.5, 0.8, 0.95 })
            {
                string label = string.Create(CultureInfo.InvariantCulture, $"clean tau {tauS:F0} s share {share:F2}");
                TrackProcessor cellProcessor = matched
                    ? new TrackProcessor(processor.Options, processor.Profile with { GnssCorrelatedFraction = share, GnssErrorTimeConstantS = tauS })
                    : processor;
                RealisticDrive Cell(int seed)
                {
                    RealisticDrive d = RealisticDrives.CleanSky(seed);
                    return d with { Suite = d.Suite with { GnssCorrelationTauS = tauS, GnssCorrelatedVarianceFraction = share } };
                }

                // The earlier rounds: other routes and seeds (1251 + 100 r + j, never an evaluated seed), the same receiver;
                // the fleet's vans: seeds 1290 + 100 v + j (at most ten rounds), neither evaluated nor another drive's earlier rounds.
                Func<RealisticDrive, TrackState>? start = null;
                if (learned)
                {
                    start = d => TrackReplay.StartAfter(cellProcessor, Enumerable.Range(0, earlierRounds).Select(j => Cell(d.Seed + 50 + j).Generate().Measurements));
                }
                else if (fleet)
                {
                    var fleetStart = new Lazy<TrackState>(() => FleetStart(cellProcessor, v => Enumerable.Range(0, earlierRounds).Select(j => Cell(1290 + (v * 100) + j))));
                    start = _ => fleetStart.Value;
                }

                Report(label, cellProcessor, Enumerable.Range(0, runs).Select(r => Cell(1201 + (r * 100))), start: start);
            }
        }

        foreach ((double minM, double maxM) in new[] { (10.0, 20.0), (40.0, 80.0) })
        {
            string label = string.Create(CultureInfo.InvariantCulture, $"multipath {minM:F0}-{maxM:F0} m");
            Report(label, processor, Enumerable.Range(0, runs).Select(r =>
            {
                RealisticDrive d = RealisticDrives.Multipath(1202 + (r * 100));
                return d with { Suite = d.Suite with { GnssRandomMultipath = RealisticDrives.ThirdOfTheTimeMultipath with { BiasMinM = minM, BiasMaxM = maxM } } };
            }));
        }

        foreach (double jumpShare in new[] { 0.005, 0.03 })
        {
            string label = string.Create(CultureInfo.InvariantCulture, $"clean, jumps {jumpShare * 100:0.#} %");
            Report(label, processor, Enumerable.Range(0, runs).Select(r =>
            {
                RealisticDrive d = RealisticDrives.CleanSky(1201 + (r * 100));
                return d with { Suite = d.Suite with { OutlierProbability = jumpShare } };
            }));
        }

        ReportFaultyStreams(processor, runs);
    }

    /// <summary>
    /// One stream replaced by a consistently wrong one, beside the same drives without that stream: a wheel channel
    /// scaled 1.3 x, a gyro with the wrong sign, a GNSS course 30 degrees off the path.
    /// </summary>
    private static void ReportFaultyStreams(TrackProcessor processor, int runs)
    {
        IEnumerable<RealisticDrive> Drives() => Enumerable.Range(0, runs).Select(r => RealisticDrives.CleanSky(1201 + (r * 100)));
        const double CourseOffsetRad = 30.0 * Math.PI / 180.0;
        Report("wheel reads 1.3 x", processor, Drives(), m => m.Kind == SensorKind.WheelSpeed ? Measurement.WheelSpeed(m.TimeUs, m.MessageKey, 1.3 * m.Value0) : m);
        Report("  without the wheel", processor, Drives(), m => m.Kind == SensorKind.WheelSpeed ? null : m);
        Report("gyro sign flipped", processor, Drives(), m => m.Kind == SensorKind.Imu ? Measurement.Imu(m.TimeUs, m.MessageKey, -m.Value0, m.Value1) : m);
        Report("  without the IMU", processor, Drives(), m => m.Kind == SensorKind.Imu ? null : m);
        Report("course 30 deg off", processor, Drives(), m => m.Kind == SensorKind.GnssVelocity && !double.IsNaN(m.Value1)
            ? Measurement.GnssVelocity(m.TimeUs, m.MessageKey, m.Value0, (m.Value1 + CourseOffsetRad) % (2 * Math.PI), m.Value2) : m);
        Report("  without the course", processor, Drives(), m => m.Kind == SensorKind.GnssVelocity
            ? Measurement.GnssVelocity(m.TimeUs, m.MessageKey, m.Value0, double.NaN, m.Value2) : m);
    }

    /// <summary>
    /// A new van's start in the fleet mode: the median share and time constant of what <see cref="FleetVans"/> vans fitted
    /// over their rounds (those without a fit left out, as the service leaves them out).
    /// </summary>
    private static TrackState FleetStart(TrackProcessor processor, Func<int, IEnumerable<RealisticDrive>> roundsOfVan)
    {
        var shares = new List<double>();
        var timeConstantsS = new List<double>();
        for (int v = 0; v < FleetVans; v++)
        {
            GnssErrorVariogram fit = TrackReplay.StartAfter(processor, roundsOfVan(v).Select(d => d.Generate().Measurements)).GnssErrorFit;
            if (fit.HasEstimate)
            {
                shares.Add(fit.Share);
                timeConstantsS.Add(fit.TimeConstantS);
            }
        }

        double share = Median(shares), timeConstantS = Median(timeConstantsS);
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"  fleet start: f = {share:F3}, tau = {timeConstantS:F1} s (median of {shares.Count} vans)"));
        return TrackState.StartingFrom(share, timeConstantS);
    }

    // Cases whose label contains this text are run, all when null (third argument of the command).
    private static string? _onlyCases;

    private static void Report(
        string label, TrackProcessor processor, IEnumerable<RealisticDrive> drives, Func<Measurement, Measurement?>? alter = null,
        Func<RealisticDrive, TrackState>? start = null)
    {
        if (_onlyCases is { } only && !label.Contains(only, StringComparison.Ordinal))
        {
            return;
        }

        var clock = Stopwatch.StartNew();
        var filtered = new Tally();
        var smoothed = new Tally();
        var gnssOnly = new Tally();
        double rawSq = 0;
        long raw = 0, cleanFixes = 0, cleanGated = 0, resets = 0, jumps = 0, jumpsGated = 0, jumpsHeld = 0;
        var isolatedAfterS = new List<double>();
        var isolatedStreams = new SortedSet<string>(StringComparer.Ordinal);
        var fittedShares = new List<double>();
        var fittedTimeConstantsS = new List<double>();
        int driveCount = 0;
        double meanErrorSquaresM2 = 0, meanErrorModelM2 = 0;
        foreach (RealisticDrive drive in drives)
        {
            driveCount++;
            ScenarioRun run = drive.Generate();
            foreach (MeasurementTruth t in run.MeasurementTruths)
            {
                if (t.Kind == SensorKind.GnssPosition)
                {
                    rawSq += (t.ErrorEastM * t.ErrorEastM) + (t.ErrorNorthM * t.ErrorNorthM);
                    raw++;
                }
            }

            if (label.StartsWith("park", StringComparison.Ordinal))
            {
                (double squaresM2, double modelM2) = ErrorOfTheMean(run, drive.Suite);
                meanErrorSquaresM2 += squaresM2;
                meanErrorModelM2 += modelM2;
            }

            List<Measurement> measurements = alter is null
                ? [.. run.Measurements]
                : [.. run.Measurements.Select(alter).Where(m => m is not null).Select(m => m!.Value)];
            ReplayResult replay = TrackReplay.Run(processor, start?.Invoke(drive) ?? TrackState.Empty, measurements);
            GnssErrorVariogram fit = replay.Final.GnssErrorFit;
            fittedShares.Add(fit.HasEstimate ? fit.Share : processor.Profile.GnssCorrelatedFraction);
            fittedTimeConstantsS.Add(fit.HasEstimate ? fit.TimeConstantS : processor.Profile.GnssErrorTimeConstantS);
            bool isolated = false;
            var segmentStartsUs = replay.Forward.Where(f => f.Count > 0).Select(f => f[0].TimeUs).ToHashSet();
            foreach ((Measurement m, MeasurementOutcome o) in replay.Outcomes)
            {
                if (o.Isolated)
                {
                    isolatedStreams.Add(m.Kind == SensorKind.Imu ? "gyro" : "course");
                    if (!isolated)
                    {
                        isolated = true;
                        isolatedAfterS.Add((m.TimeUs - measurements[0].TimeUs) / 1e6);
                    }
                }

                if (o.Kind == OutcomeKind.TrackReset)
                {
                    resets++;
                }

                if (m.Kind == SensorKind.GnssPosition && run.GetMeasurementTruth(m.MessageKey) is { IsOutlier: true })
                {
                    jumps++;
                    jumpsGated += o.Kind == OutcomeKind.Gated ? 1 : 0;
                    jumpsHeld += o.Kind == OutcomeKind.Initialising && !segmentStartsUs.Contains(m.TimeUs) ? 1 : 0;
                }

                if (m.Kind == SensorKind.GnssPosition && run.GetMeasurementTruth(m.MessageKey) is { IsOutlier: false, InMultipath: false, InUrbanCanyon: false }
                    && o.Kind is OutcomeKind.Accepted or OutcomeKind.Gated or OutcomeKind.TrackReset)
                {
                    cleanFixes++;
                    cleanGated += o.Kind == OutcomeKind.Accepted ? 0 : 1;
                }
            }

            foreach (IReadOnlyList<ForwardStep> segment in replay.Forward)
            {
                foreach (ForwardStep step in segment)
                {
                    filtered.Add(run.Truth, step.TimeUs, step.Plane, step.Filtered, step.FilteredCovariance);
                }
            }

            ReplayResult baseline = TrackReplay.Run(
                processor, TrackState.Empty, measurements.Where(m => m.Kind is SensorKind.GnssPosition or SensorKind.GnssVelocity));
            foreach (IReadOnlyList<ForwardStep> segment in baseline.Forward)
            {
                foreach (ForwardStep step in segment)
                {
                    gnssOnly.Add(run.Truth, step.TimeUs, step.Plane, step.Filtered, step.FilteredCovariance);
                }
            }

            foreach (SmoothedSegment segment in replay.Smoothed)
            {
                for (int k = 0; k < segment.Count; k++)
                {
                    smoothed.Add(run.Truth, segment.TimesUs[k], segment.Planes[k], segment.Means[k], segment.Covariances[k]);
                }
            }

            filtered.EndDrive();
            smoothed.EndDrive();
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"{label,-28} {filtered.Containment * 100,5:F1} ± {filtered.ContainmentStandardError * 100:F1} %  {smoothed.Containment * 100,5:F1} ± {smoothed.ContainmentStandardError * 100:F1} %  {filtered.MeanNees,9:F2}  {smoothed.MeanNees,11:F2}  {Math.Sqrt(rawSq / raw),8:F2}  {filtered.Rmse,4:F2}  {smoothed.Rmse,6:F2}  {gnssOnly.Rmse,13:F2}  {(double)cleanGated / Math.Max(1, cleanFixes),17:P2}  {(jumps == 0 ? "-" : string.Create(CultureInfo.InvariantCulture, $"{jumpsGated}{(jumpsHeld > 0 ? $"+{jumpsHeld}" : "")}/{jumps}")),11}  {resets,6}  {Isolation(isolatedAfterS, isolatedStreams, driveCount),-30}  {Median(fittedShares):F2} / {Median(fittedTimeConstantsS):F0} s [{Quantile(fittedTimeConstantsS, 0.1):F0}-{Quantile(fittedTimeConstantsS, 0.9):F0}] ({clock.Elapsed.TotalSeconds:F0} s)"));
        if (meanErrorModelM2 > 0)
        {
            PrintErrorOfTheMean(meanErrorSquaresM2, meanErrorModelM2, driveCount);
        }
    }

    /// <summary>
    /// A standing van's smoothed position is in effect one estimate per drive, the mean of its clean fixes, so its
    /// containment over n drives rests on n samples: prints how large the drives' own error of that mean was (RMS per axis)
    /// beside what the receiver's error model gives for it.
    /// </summary>
    private static void PrintErrorOfTheMean(double squaresM2, double modelM2, int drives) =>
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"  the drives' mean error of their clean fixes, RMS per axis: {Math.Sqrt(squaresM2 / (2 * drives)):F3} m; the receiver's model: {Math.Sqrt(modelM2 / drives):F3} m"));

    /// <summary>
    /// The squared mean error of a drive's clean fixes (east plus north) and the variance per axis the receiver's model
    /// gives that mean: white part σ_w² / n plus the mean of n steps of a first-order autoregressive sequence (variance
    /// σ_c², lag-one correlation φ), σ_c² / n ((1 + φ) / (1 - φ) - 2 φ (1 - φⁿ) / (n (1 - φ)²)) (Box, Jenkins and Reinsel,
    /// <i>Time Series Analysis</i>, the variance of the sample mean; from memory), taking the clean fixes as consecutive
    /// seconds (multipath episodes leave gaps, so the model's figure is slightly low).
    /// </summary>
    private static (double SquaresM2, double ModelM2) ErrorOfTheMean(ScenarioRun run, SensorSuite suite)
    {
        double sumEastM = 0, sumNorthM = 0;
        int n = 0;
        foreach (MeasurementTruth t in run.MeasurementTruths)
        {
            if (t.Kind == SensorKind.GnssPosition && !t.IsOutlier && !t.InMultipath && !t.InUrbanCanyon)
            {
                sumEastM += t.ErrorEastM;
                sumNorthM += t.ErrorNorthM;
                n++;
            }
        }

        double phi = Math.Exp(-(suite.GnssPositionPeriodUs / 1e6) / suite.GnssCorrelationTauS);
        double correlatedM2 = suite.GnssCorrelatedSigmaM * suite.GnssCorrelatedSigmaM;
        double whiteM2 = suite.GnssWhiteSigmaM * suite.GnssWhiteSigmaM;
        double model = (whiteM2 / n)
            + (correlatedM2 / n * (((1 + phi) / (1 - phi)) - (2 * phi * (1 - Math.Pow(phi, n)) / (n * (1 - phi) * (1 - phi)))));
        return (((sumEastM / n) * (sumEastM / n)) + ((sumNorthM / n) * (sumNorthM / n)), model);
    }

    private static double Quantile(List<double> values, double p)
    {
        values.Sort();
        return values.Count == 0 ? double.NaN : values[(int)(p * (values.Count - 1))];
    }

    private static double Median(List<double> values)
    {
        values.Sort();
        return values.Count == 0 ? double.NaN : values[values.Count / 2];
    }

    private static string Isolation(List<double> afterS, SortedSet<string> streams, int drives)
    {
        if (afterS.Count == 0)
        {
            return "none";
        }

        afterS.Sort();
        return string.Create(CultureInfo.InvariantCulture, $"{string.Join('+', streams)} {afterS.Count}/{drives}, {afterS[0]:F0}-{afterS[^1]:F0} s");
    }

    /// <summary>
    /// Containment, NEES and RMSE over all drives of a case. The standard error of the containment comes from the spread
    /// of the drives' own containments (s / √n over drives), not from the count of seconds: seconds of one drive share
    /// its GNSS error, correlated over about a minute, so they are far from independent.
    /// </summary>
    private sealed class Tally
    {
        private readonly List<double> _driveContainments = [];
        private long _count;
        private long _inside;
        private long _driveStartCount;
        private long _driveStartInside;
        private double _nees;
        private double _squared;
        private long _lastUs = long.MinValue;

        public double Containment => (double)_inside / Math.Max(1, _count);

        public double ContainmentStandardError
        {
            get
            {
                int n = _driveContainments.Count;
                if (n < 2)
                {
                    return double.NaN;
                }

                double mean = _driveContainments.Average();
                double variance = _driveContainments.Sum(c => (c - mean) * (c - mean)) / (n - 1);
                return Math.Sqrt(variance / n);
            }
        }

        /// <summary>Closes one drive: its containment joins the spread the standard error is computed from.</summary>
        public void EndDrive()
        {
            long count = _count - _driveStartCount;
            if (count > 0)
            {
                _driveContainments.Add((double)(_inside - _driveStartInside) / count);
            }

            _driveStartCount = _count;
            _driveStartInside = _inside;
            _lastUs = long.MinValue;
        }

        public double MeanNees => _nees / Math.Max(1, _count);

        public double Rmse => Math.Sqrt(_squared / Math.Max(1, _count));

        /// <summary>Adds the state at <paramref name="timeUs"/> if it is the first one at or after a whole second.</summary>
        public void Add(TruthTrajectory truth, long timeUs, in LocalTangentPlane plane, in StateVector x, in StateMatrix p)
        {
            long second = timeUs / 1_000_000;
            if (second == _lastUs || !truth.Covers(timeUs))
            {
                return;
            }

            _lastUs = second;
            (double de, double dn) = truth.OffsetOf(timeUs, plane, x[EastM], x[NorthM]);
            const int N = StateMatrix.Size;
            double a = p[0], b = p[1], c = p[N + 1];
            double d2 = ((c * de * de) - (2 * b * de * dn) + (a * dn * dn)) / ((a * c) - (b * b));
            _count++;
            _inside += d2 <= Inside95 ? 1 : 0;
            _nees += d2;
            _squared += (de * de) + (dn * dn);
        }
    }
}
