// Turns a truth trajectory into noisy sensor measurements.
using FusionService.Estimation.Measurements;

namespace FusionService.Scenarios;

/// <summary>
/// Produces <see cref="Measurement"/>s of a <see cref="SensorSuite"/> from a <see cref="TruthTrajectory"/>, each
/// sensor at its own period from the truth's first sample, with reproducible noise for a given seed.
/// </summary>
/// <remarks>
/// Each noise source draws from its own seeded stream and draws the same numbers for every epoch whether or not the
/// epoch is emitted, so adding an outage, an outlier probability or a canyon leaves all other measurements unchanged.
/// Message keys are ((byte)kind &lt;&lt; 48) | running count of that kind, hence unique within a run (and within the core's 56-bit key space).
/// GNSS position: truth + error converted to latitude/longitude by the truth's frame, reporting the configured
/// (or canyon) sigma. GNSS velocity: speed = |v| + noise (folded at 0, flipping the course), course of motion
/// π/2 - heading (+π when reversing) plus noise of sigma speed sigma / measured speed, NaN below the course
/// threshold; unaffected by canyons and outliers. Wheel: v x scale + noise (exactly 0 at standstill by default).
/// IMU: yaw rate + gyro bias + noise, acceleration + noise.
/// Realistic GNSS (issue 12, all off by default, and off leaves the output bit for bit as before): a time-correlated
/// position error (first-order Gauss-Markov, exact discretisation over the fix period, Brown and Hwang 2012, from
/// memory) plus a white part, the reported accuracy describing the total; multipath episodes adding a bias to fixes;
/// HDOP-only accuracy; course rounded to a resolution (so 360° occurs); carried spans in which wheel and IMU read a
/// standstill while the truth moves. In an urban canyon the canyon's error replaces the open-sky error (both parts);
/// an outlier's error is its jump alone; a multipath bias adds to any other fix.
/// </remarks>
public static class MeasurementGenerator
{
    private const ulong GnssNoiseStream = 1;
    private const ulong OutlierStream = 2;
    private const ulong CanyonStream = 3;
    private const ulong VelocityStream = 4;
    private const ulong WheelStream = 5;
    private const ulong ImuStream = 6;
    private const ulong CorrelatedStream = 7;
    private const ulong MultipathStream = 8;

    /// <summary>Generates the measurements of <paramref name="suite"/> over the whole of <paramref name="truth"/>.</summary>
    /// <param name="truth">True motion (and, optionally, true sensor errors).</param>
    /// <param name="suite">Sensors, rates and noise.</param>
    /// <param name="seed">Seed of all noise draws.</param>
    /// <exception cref="ArgumentOutOfRangeException">The truth leaves a sensor's physical range (see the <see cref="Measurement"/> factories).</exception>
    public static ScenarioRun Generate(TruthTrajectory truth, SensorSuite suite, int seed)
    {
        ArgumentNullException.ThrowIfNull(truth);
        ArgumentNullException.ThrowIfNull(suite);
        suite.Validate();
        var measurements = new List<Measurement>();
        var truths = new List<MeasurementTruth>();
        if (suite.GnssPositionEnabled)
        {
            GeneratePositions(truth, suite, seed, measurements, truths);
        }

        if (suite.GnssVelocityEnabled)
        {
            GenerateVelocities(truth, suite, seed, measurements, truths);
        }

        if (suite.WheelSpeedEnabled)
        {
            GenerateWheelSpeeds(truth, suite, seed, measurements, truths);
        }

        if (suite.ImuEnabled)
        {
            GenerateImu(truth, suite, seed, measurements, truths);
        }

        var order = new int[measurements.Count];
        for (int i = 0; i < order.Length; i++)
        {
            order[i] = i;
        }

        Array.Sort(order, (x, y) => CompareCanonical(measurements[x], measurements[y]));
        var sorted = new Measurement[order.Length];
        var sortedTruths = new MeasurementTruth[order.Length];
        for (int i = 0; i < order.Length; i++)
        {
            sorted[i] = measurements[order[i]];
            sortedTruths[i] = truths[order[i]];
        }

        return new ScenarioRun(truth, suite, seed, sorted, sortedTruths);
    }

    /// <summary>
    /// The multipath episodes a run of <paramref name="suite"/> over <paramref name="truth"/> with <paramref name="seed"/>
    /// applies: the explicit <see cref="SensorSuite.GnssMultipathEpisodes"/> then those drawn by
    /// <see cref="SensorSuite.GnssRandomMultipath"/> (its own stream), sorted by start (explicit first at equal starts).
    /// Where episodes overlap, the first in this list that contains a fix applies.
    /// </summary>
    /// <param name="truth">True motion (its span bounds the random episodes).</param>
    /// <param name="suite">Sensors.</param>
    /// <param name="seed">Seed of the run.</param>
    public static IReadOnlyList<MultipathEpisode> MultipathEpisodesOf(TruthTrajectory truth, SensorSuite suite, int seed)
    {
        ArgumentNullException.ThrowIfNull(truth);
        ArgumentNullException.ThrowIfNull(suite);
        var episodes = new List<MultipathEpisode>(suite.GnssMultipathEpisodes);
        if (suite.GnssRandomMultipath is MultipathProcess process)
        {
            episodes.AddRange(process.Generate(truth.StartTimeUs, truth.EndTimeUs, new ScenarioRandom(seed, MultipathStream)));
        }

        // List.Sort is unstable; the index breaks ties so explicit episodes stay first.
        return [.. episodes.Select((e, i) => (e, i)).OrderBy(p => p.e.Span.StartTimeUs).ThenBy(p => p.i).Select(p => p.e)];
    }

    /// <summary>The canonical processing order: time, then kind, then message key.</summary>
    /// <param name="x">First measurement.</param>
    /// <param name="y">Second measurement.</param>
    public static int CompareCanonical(Measurement x, Measurement y)
    {
        int c = x.TimeUs.CompareTo(y.TimeUs);
        if (c != 0)
        {
            return c;
        }

        c = ((byte)x.Kind).CompareTo((byte)y.Kind);
        return c != 0 ? c : x.MessageKey.CompareTo(y.MessageKey);
    }

    private static ulong Key(SensorKind kind, ulong count) => ((ulong)kind << 48) | count;

    private static bool InAny(IReadOnlyList<TimeInterval> spans, long timeUs)
    {
        foreach (TimeInterval span in spans)
        {
            if (span.Contains(timeUs))
            {
                return true;
            }
        }

        return false;
    }

    private static UrbanCanyon? CanyonAt(IReadOnlyList<UrbanCanyon> canyons, long timeUs)
    {
        foreach (UrbanCanyon canyon in canyons)
        {
            if (canyon.Span.Contains(timeUs))
            {
                return canyon;
            }
        }

        return null;
    }

    private static MultipathEpisode? EpisodeAt(IReadOnlyList<MultipathEpisode> episodes, long timeUs)
    {
        foreach (MultipathEpisode episode in episodes)
        {
            if (episode.Span.Contains(timeUs))
            {
                return episode;
            }
        }

        return null;
    }

    private static void GeneratePositions(TruthTrajectory truth, SensorSuite suite, int seed, List<Measurement> output, List<MeasurementTruth> truths)
    {
        var noise = new ScenarioRandom(seed, GnssNoiseStream);
        var outliers = new ScenarioRandom(seed, OutlierStream);
        var canyonNoise = new ScenarioRandom(seed, CanyonStream);
        var correlatedNoise = new ScenarioRandom(seed, CorrelatedStream);
        IReadOnlyList<MultipathEpisode> episodes = MultipathEpisodesOf(truth, suite, seed);
        bool correlated = suite.GnssCorrelatedVarianceFraction > 0;
        double sigmaCorrM = suite.GnssCorrelatedSigmaM;
        double sigmaWhiteM = suite.GnssWhiteSigmaM;
        double stepS = suite.GnssPositionPeriodUs / 1e6;
        double phi = FirstOrderGaussMarkov.Phi(stepS, suite.GnssCorrelationTauS);
        double drivingSigmaM = sigmaCorrM * Math.Sqrt(FirstOrderGaussMarkov.DrivingVarianceRatio(stepS, suite.GnssCorrelationTauS));
        double corrEastM = 0, corrNorthM = 0;
        ulong count = 0;
        for (long t = truth.StartTimeUs; t <= truth.EndTimeUs; t += suite.GnssPositionPeriodUs)
        {
            if (correlated)
            {
                // Started from the stationary distribution, then propagated every epoch (emitted or not).
                double ce = correlatedNoise.NextGaussian();
                double cn = correlatedNoise.NextGaussian();
                corrEastM = t == truth.StartTimeUs ? sigmaCorrM * ce : (phi * corrEastM) + (drivingSigmaM * ce);
                corrNorthM = t == truth.StartTimeUs ? sigmaCorrM * cn : (phi * corrNorthM) + (drivingSigmaM * cn);
            }

            double ze = noise.NextGaussian();
            double zn = noise.NextGaussian();
            bool isOutlier = outliers.NextBernoulli(suite.OutlierProbability);
            double jumpM = outliers.NextUniform(suite.OutlierMinM, suite.OutlierMaxM);
            double jumpDirRad = outliers.NextUniform(0.0, 2.0 * Math.PI);
            UrbanCanyon? canyon = CanyonAt(suite.UrbanCanyons, t);
            double mixing = 1.0;
            if (canyon is UrbanCanyon c && double.IsFinite(c.DegreesOfFreedom))
            {
                double nu = c.DegreesOfFreedom;
                mixing = Math.Sqrt((nu - 2.0) / nu) / Math.Sqrt(canyonNoise.NextChiSquared(nu) / nu);
            }

            if (InAny(suite.GnssOutages, t))
            {
                continue;
            }

            double errorEastM, errorNorthM, reportedSigmaM;
            double appliedCorrEastM = 0, appliedCorrNorthM = 0;
            if (canyon is UrbanCanyon cy)
            {
                errorEastM = cy.BiasEastM + (cy.SigmaM * mixing * ze);
                errorNorthM = cy.BiasNorthM + (cy.SigmaM * mixing * zn);
                reportedSigmaM = cy.ReportedSigmaM ?? cy.SigmaM;
            }
            else if (correlated)
            {
                errorEastM = corrEastM + (sigmaWhiteM * ze);
                errorNorthM = corrNorthM + (sigmaWhiteM * zn);
                appliedCorrEastM = corrEastM;
                appliedCorrNorthM = corrNorthM;
                reportedSigmaM = suite.GnssSigmaM;
            }
            else
            {
                errorEastM = suite.GnssSigmaM * ze;
                errorNorthM = suite.GnssSigmaM * zn;
                reportedSigmaM = suite.GnssSigmaM;
            }

            MultipathEpisode? episode = EpisodeAt(episodes, t);
            if (isOutlier)
            {
                errorEastM = jumpM * Math.Cos(jumpDirRad);
                errorNorthM = jumpM * Math.Sin(jumpDirRad);
                appliedCorrEastM = 0;
                appliedCorrNorthM = 0;
            }
            else if (episode is MultipathEpisode mp)
            {
                errorEastM += mp.BiasEastM;
                errorNorthM += mp.BiasNorthM;
                reportedSigmaM *= suite.GnssMultipathReportedSigmaScale;
            }

            if (suite.GnssReportedHdop is double hdop)
            {
                reportedSigmaM = HorizontalAccuracy.FromHdop(hdop, suite.GnssUereM);
            }

            TruthSample s = truth.At(t);
            truth.ToGeodeticDeg(s.EastM, s.NorthM, out double trueLatDeg, out double trueLonDeg);
            truth.ToGeodeticDeg(s.EastM + errorEastM, s.NorthM + errorNorthM, out double latDeg, out double lonDeg);
            ulong key = Key(SensorKind.GnssPosition, count++);
            output.Add(Measurement.GnssPosition(t, key, latDeg, lonDeg, reportedSigmaM, sigmaFromHdop: suite.GnssReportedHdop is not null));
            truths.Add(new MeasurementTruth(
                key, SensorKind.GnssPosition, t, isOutlier, canyon is not null, errorEastM, errorNorthM, trueLatDeg, trueLonDeg,
                episode is not null, InAny(suite.CarriedSpans, t), appliedCorrEastM, appliedCorrNorthM));
        }
    }

    private static void GenerateVelocities(TruthTrajectory truth, SensorSuite suite, int seed, List<Measurement> output, List<MeasurementTruth> truths)
    {
        var noise = new ScenarioRandom(seed, VelocityStream);
        IReadOnlyList<MultipathEpisode> episodes = MultipathEpisodesOf(truth, suite, seed);
        ulong count = 0;
        for (long t = truth.StartTimeUs; t <= truth.EndTimeUs; t += suite.GnssVelocityPeriodUs)
        {
            double zs = noise.NextGaussian();
            double zc = noise.NextGaussian();
            if (InAny(suite.GnssOutages, t))
            {
                continue;
            }

            TruthSample s = truth.At(t);
            double trueSpeedMps = Math.Abs(s.SpeedMps);
            double trueCourseRad = CourseOfMotion(s.HeadingRad, s.SpeedMps < 0);
            double speedMps = trueSpeedMps + (suite.GnssSpeedSigmaMps * zs);
            double courseRad = trueCourseRad;
            if (speedMps < 0)
            {
                speedMps = -speedMps;
                courseRad += Math.PI;
            }

            courseRad = speedMps < suite.CourseMinSpeedMps
                ? double.NaN
                : WrapTwoPi(courseRad + (suite.GnssSpeedSigmaMps / speedMps * zc));
            if (suite.GnssCourseResolutionDeg is double resolutionDeg && !double.IsNaN(courseRad))
            {
                courseRad = RoundCourse(courseRad, resolutionDeg);
            }

            ulong key = Key(SensorKind.GnssVelocity, count++);
            output.Add(Measurement.GnssVelocity(t, key, speedMps, courseRad, suite.GnssSpeedSigmaMps));
            truths.Add(new MeasurementTruth(
                key, SensorKind.GnssVelocity, t, false, CanyonAt(suite.UrbanCanyons, t) is not null, 0, 0, trueSpeedMps, trueCourseRad,
                EpisodeAt(episodes, t) is not null, InAny(suite.CarriedSpans, t)));
        }
    }

    private static void GenerateWheelSpeeds(TruthTrajectory truth, SensorSuite suite, int seed, List<Measurement> output, List<MeasurementTruth> truths)
    {
        var noise = new ScenarioRandom(seed, WheelStream);
        IReadOnlyList<MultipathEpisode> episodes = MultipathEpisodesOf(truth, suite, seed);
        ulong count = 0;
        for (long t = truth.StartTimeUs; t <= truth.EndTimeUs; t += suite.WheelSpeedPeriodUs)
        {
            double z = noise.NextGaussian();
            TruthSample s = truth.At(t);
            double scale = truth.SensorErrorsAt(t)?.WheelScale ?? suite.WheelScale;
            bool carried = InAny(suite.CarriedSpans, t);
            double expectedMps = carried ? 0.0 : s.SpeedMps * scale;
            double speedMps = carried || (s.SpeedMps == 0.0 && suite.WheelSpeedZeroAtStandstill) ? 0.0 : expectedMps + (suite.WheelSpeedSigmaMps * z);
            ulong key = Key(SensorKind.WheelSpeed, count++);
            output.Add(Measurement.WheelSpeed(t, key, speedMps));
            truths.Add(new MeasurementTruth(
                key, SensorKind.WheelSpeed, t, false, CanyonAt(suite.UrbanCanyons, t) is not null, 0, 0, expectedMps, double.NaN,
                EpisodeAt(episodes, t) is not null, carried));
        }
    }

    private static void GenerateImu(TruthTrajectory truth, SensorSuite suite, int seed, List<Measurement> output, List<MeasurementTruth> truths)
    {
        var noise = new ScenarioRandom(seed, ImuStream);
        IReadOnlyList<MultipathEpisode> episodes = MultipathEpisodesOf(truth, suite, seed);
        ulong count = 0;
        for (long t = truth.StartTimeUs; t <= truth.EndTimeUs; t += suite.ImuPeriodUs)
        {
            double zg = noise.NextGaussian();
            double za = noise.NextGaussian();
            TruthSample s = truth.At(t);
            double bias = truth.SensorErrorsAt(t)?.GyroBiasRps ?? suite.GyroBiasRps;
            bool carried = InAny(suite.CarriedSpans, t);
            double yawRps = carried ? 0.0 : s.YawRateRps;
            double trueAccelMps2 = carried ? 0.0 : s.AccelMps2;
            double expectedYawRps = yawRps + bias;
            double expectedAccelMps2 = suite.AccelerometerPresent ? trueAccelMps2 : double.NaN;
            double accelMps2 = suite.AccelerometerPresent ? trueAccelMps2 + (suite.AccelSigmaMps2 * za) : double.NaN;
            ulong key = Key(SensorKind.Imu, count++);
            output.Add(Measurement.Imu(t, key, expectedYawRps + (suite.GyroSigmaRps * zg), accelMps2));
            truths.Add(new MeasurementTruth(
                key, SensorKind.Imu, t, false, CanyonAt(suite.UrbanCanyons, t) is not null, 0, 0, expectedYawRps, expectedAccelMps2,
                EpisodeAt(episodes, t) is not null, carried));
        }
    }

    /// <summary>Course of motion, radians clockwise from north in [0, 2π), of a heading counter-clockwise from east.</summary>
    private static double CourseOfMotion(double headingRad, bool reversing) =>
        WrapTwoPi((Math.PI / 2.0) - headingRad + (reversing ? Math.PI : 0.0));

    /// <summary>
    /// A course rounded to <paramref name="resolutionDeg"/> degrees, in radians; a course within half a step below 360°
    /// becomes exactly 2π (360°), as a receiver printing the rounded value would write it.
    /// </summary>
    private static double RoundCourse(double courseRad, double resolutionDeg)
    {
        double roundedDeg = Math.Round(courseRad * (180.0 / Math.PI) / resolutionDeg) * resolutionDeg;
        return Math.Abs(roundedDeg - 360.0) < 0.5 * resolutionDeg ? 2.0 * Math.PI : roundedDeg / 180.0 * Math.PI;
    }

    private static double WrapTwoPi(double rad)
    {
        double r = rad % (2.0 * Math.PI);
        if (r < 0)
        {
            r += 2.0 * Math.PI;
        }

        return r >= 2.0 * Math.PI ? 0.0 : r;
    }
}
