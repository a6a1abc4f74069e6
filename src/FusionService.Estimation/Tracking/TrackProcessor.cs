using FusionService.Estimation.Filtering;
using FusionService.Estimation.Gating;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// Processes one measurement at a time, in canonical order, on a <see cref="TrackState"/>: track start,
/// prediction, gated extended Kalman updates, the stationary constraint, heading re-acquisition and track resets.
/// A pure function of (state, measurement): no clock, no randomness, no I/O.
/// </summary>
public sealed class TrackProcessor
{
    private const int N = StateMatrix.Size;
    private const double MicrosecondsPerSecond = 1e6;

    /// <summary>Creates a processor; validates both arguments.</summary>
    public TrackProcessor(TrackOptions options, NoiseProfile profile)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(profile);
        options.Validate();
        profile.Validate();
        Options = options;
        Profile = profile;
        Gate = new ChiSquareGate(options.GateProbability);
        _stepThreshold = options.MultipathStepProbability > 0 ? new ChiSquareGate(options.MultipathStepProbability).Threshold(2) : double.PositiveInfinity;
    }

    // NIS of a step between successive fixes beyond which a multipath episode is suspected (infinite: the test is off).
    private readonly double _stepThreshold;

    /// <summary>Track options.</summary>
    public TrackOptions Options { get; }

    /// <summary>Noise profile.</summary>
    public NoiseProfile Profile { get; }

    /// <summary>The chi-square gate.</summary>
    public ChiSquareGate Gate { get; }

    /// <summary>
    /// Processes <paramref name="m"/>, whose time must not precede <paramref name="state"/>'s time.
    /// </summary>
    /// <param name="state">Track state, advanced in place.</param>
    /// <param name="m">The measurement.</param>
    /// <param name="recorder">Optional receiver of the forward steps for smoothing.</param>
    /// <returns>What was done with the measurement.</returns>
    /// <exception cref="FilterDivergenceException">The covariance stopped being positive definite.</exception>
    public MeasurementOutcome Process(ref TrackState state, in Measurement m, IStepRecorder? recorder = null)
    {
        if (state.Phase == TrackPhase.Running && m.TimeUs < state.TimeUs)
        {
            throw new ArgumentException($"measurement at {m.TimeUs} us precedes the track state at {state.TimeUs} us", nameof(m));
        }

        return state.Phase == TrackPhase.Running ? ProcessRunning(ref state, m, recorder) : ProcessStarting(ref state, m, recorder);
    }

    /// <summary>
    /// Dimension of the innovation a running track forms for <paramref name="m"/> (the chi-square degrees of freedom of
    /// its NIS): GNSS position 2; GNSS velocity 2 when the course is used (speed at least
    /// <see cref="TrackOptions.CourseMinSpeedMps"/> and a course given), else 1; wheel 1; IMU 2 with acceleration, else 1.
    /// The same rule the update steps apply, for statistics over stored measurements that kept the NIS but not its dimension.
    /// </summary>
    public int InnovationDimension(in Measurement m) => m.Kind switch
    {
        SensorKind.GnssPosition => 2,
        SensorKind.GnssVelocity => m.AsGnssVelocity() is var v && v.SpeedMps >= Options.CourseMinSpeedMps && v.HasCourse ? 2 : 1,
        SensorKind.WheelSpeed => 1,
        SensorKind.Imu => m.AsImu().HasAccel ? 2 : 1,
        _ => throw new ArgumentOutOfRangeException(nameof(m), m.Kind, "unknown sensor kind"),
    };

    /// <summary>Position of the state as latitude and longitude (height ignored).</summary>
    public static GeodeticPoint PositionOf(in TrackState state) => state.Plane.ToGeodetic(OnPlane(state.X[EastM], state.X[NorthM]));

    private static EnuPoint OnPlane(double eastM, double northM) =>
        new(eastM, northM, -((eastM * eastM) + (northM * northM)) / (2.0 * Wgs84.SemiMajorAxisM));

    /// <summary>A measurement before the track runs: only GNSS fixes and courses and standing still can start it.</summary>
    private MeasurementOutcome ProcessStarting(ref TrackState s, in Measurement m, IStepRecorder? recorder) => m.Kind switch
    {
        SensorKind.GnssPosition => ProcessFixBeforeStart(ref s, m, recorder),
        SensorKind.GnssVelocity => ProcessCourseBeforeStart(ref s, m, recorder),
        SensorKind.WheelSpeed => ProcessWheelBeforeStart(ref s, m, recorder),
        _ => MeasurementOutcome.Of(OutcomeKind.BeforeStart),
    };

    /// <summary>
    /// A GNSS fix before the track runs: the first one anchors the local plane (if none) and is held; a later one goes to
    /// <see cref="ProcessFixAfterHeldFix"/>. No track starts from a single fix: a lone jump would start it tens of metres
    /// off, beyond the reach of the gate that follows.
    /// </summary>
    private MeasurementOutcome ProcessFixBeforeStart(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        GnssFixView gnssFix = m.AsGnssFix();
        var fixPoint = GeodeticPoint.FromDegrees(gnssFix.LatitudeDeg, gnssFix.LongitudeDeg);
        if (!s.HasPlane)
        {
            s.Plane = new LocalTangentPlane(fixPoint);
            s.HasPlane = true;
        }

        EnuPoint enu = s.Plane.ToEnu(fixPoint);
        var fix = new HeldFix(true, m.TimeUs, enu.EastM, enu.NorthM, gnssFix.AccuracyM);
        if (s.Phase == TrackPhase.Empty || !s.Fix.IsSet)
        {
            s.Phase = TrackPhase.AwaitingHeading;
            s.Fix = fix;
            return MeasurementOutcome.Of(OutcomeKind.Initialising);
        }

        return ProcessFixAfterHeldFix(ref s, m, fix, recorder);
    }

    /// <summary>
    /// A second fix beside the held one. If the two disagree (<see cref="AgreesWithHeldFix"/>) one of them is a jump and
    /// the newer is held in its place; if they agree, the track starts from a fresh course, from the heading between the
    /// two when they are further apart than their combined uncertainty allows by chance, or at the fix when standing
    /// still; otherwise the held fix stays, confirmed, for a course or a standstill to start from (the newer one, confirmed,
    /// when the held one is too old to pair for a heading: a tracker sending a fix every 30 s starts at its second).
    /// (Two-fix confirmation before a track starts: the M-of-N track initiation of Blackman and Popoli, Design and
    /// Analysis of Modern Tracking Systems, 1999, in its simplest 2-of-2 form.)
    /// </summary>
    private MeasurementOutcome ProcessFixAfterHeldFix(ref TrackState s, in Measurement m, HeldFix fix, IStepRecorder? recorder)
    {
        HeldFix first = s.Fix;
        double dtS = (m.TimeUs - first.TimeUs) / MicrosecondsPerSecond;
        if (!AgreesWithHeldFix(s, first, fix, m.TimeUs))
        {
            s.Fix = fix;
            return MeasurementOutcome.Of(OutcomeKind.Initialising);
        }

        if (CourseIsFresh(s, m.TimeUs))
        {
            StartFromCourse(ref s, fix, s.Course, m.TimeUs, recorder);
            return MeasurementOutcome.Of(OutcomeKind.Initialising);
        }

        double de = fix.EastM - first.EastM, dn = fix.NorthM - first.NorthM;
        double distanceM = Math.Sqrt((de * de) + (dn * dn));
        double sigmaM = Math.Sqrt((first.SigmaM * first.SigmaM) + (fix.SigmaM * fix.SigmaM));
        if (dtS > 0 && dtS <= Options.TwoFixMaxAgeS && distanceM > Options.TwoFixHeadingSigmas * sigmaM)
        {
            double heading = Math.Atan2(dn, de);
            Start(ref s, fix, fix.SigmaM, heading, sigmaM / distanceM, distanceM / dtS, sigmaM / dtS, m.TimeUs, recorder);
            return MeasurementOutcome.Of(OutcomeKind.Initialising);
        }

        if (s.Stationary)
        {
            StartStationary(ref s, fix, m.TimeUs, recorder);
            return MeasurementOutcome.Of(OutcomeKind.Initialising);
        }

        if (dtS > Options.TwoFixMaxAgeS)
        {
            s.Fix = fix with { Confirmed = true };
            return MeasurementOutcome.Of(OutcomeKind.Initialising);
        }

        s.Fix = first with { Confirmed = true };
        return MeasurementOutcome.Of(OutcomeKind.BeforeStart);
    }

    /// <summary>
    /// Whether <paramref name="fix"/> lies where the vehicle could be if the held fix was right: within the chi-square gate
    /// of the two fixes' variances around no motion (standing still, or the wheels reading zero from about the held fix
    /// on), around the straight path of a fresh GNSS course (its speed and course uncertainty and
    /// <see cref="TrackOptions.StartMaxAccelMps2"/> added), or, with neither, within the gate plus the distance a current
    /// wheel speed allows, or without one <see cref="TrackOptions.StartMaxSpeedMps"/>.
    /// </summary>
    private bool AgreesWithHeldFix(in TrackState s, HeldFix held, HeldFix fix, long timeUs)
    {
        double dtS = Math.Abs(fix.TimeUs - held.TimeUs) / MicrosecondsPerSecond;
        double de = fix.EastM - held.EastM, dn = fix.NorthM - held.NorthM;
        double fixesVarM2 = (held.SigmaM * held.SigmaM) + (fix.SigmaM * fix.SigmaM);
        double threshold = Gate.Threshold(2);
        if (s.Stationary)
        {
            return ((de * de) + (dn * dn)) / fixesVarM2 <= threshold;
        }

        // Wheels reading zero from at most a second after the held fix: a van that stops within that second was slower than
        // StartMaxAccelMps2 x the gap and moved at most half that acceleration x the gap squared.
        double stillGapS = Math.Max(0.0, (s.WheelZeroSinceUs - held.TimeUs) / MicrosecondsPerSecond);
        if (s.WheelZeroSinceUs != long.MinValue && stillGapS <= 1.0 && (timeUs - s.LastWheelUs) / MicrosecondsPerSecond <= Options.NoWheelAfterS)
        {
            double stoppingM = 0.5 * Options.StartMaxAccelMps2 * stillGapS * stillGapS;
            return ((de * de) + (dn * dn)) / (fixesVarM2 + (stoppingM * stoppingM)) <= threshold;
        }

        if (CourseIsFresh(s, timeUs))
        {
            double travelledM = s.Course.SpeedMps * dtS;
            double re = de - (travelledM * Math.Cos(s.Course.HeadingRad));
            double rn = dn - (travelledM * Math.Sin(s.Course.HeadingRad));
            double alongM = s.Course.SpeedSigmaMps * dtS;
            double acrossM = travelledM * s.Course.HeadingSigmaRad;
            double manoeuvreM = 0.5 * Options.StartMaxAccelMps2 * dtS * dtS;
            double varM2 = fixesVarM2 + Math.Max(alongM * alongM, acrossM * acrossM) + (manoeuvreM * manoeuvreM);
            return ((re * re) + (rn * rn)) / varM2 <= threshold;
        }

        // A current wheel speed bounds the speed over the interval: the reading with four sigma of wheel-scale error, plus
        // what StartMaxAccelMps2 could have shed since the held fix.
        double speedBoundMps = (timeUs - s.LastWheelUs) / MicrosecondsPerSecond <= 1.0
            ? (s.LastWheelSpeedMps * (1.0 + (4.0 * Profile.InitialWheelScaleSigma))) + (Options.StartMaxAccelMps2 * dtS)
            : Options.StartMaxSpeedMps;
        double reachM = Math.Sqrt(threshold * fixesVarM2) + (Math.Min(speedBoundMps, Options.StartMaxSpeedMps) * dtS);
        return (de * de) + (dn * dn) <= reachM * reachM;
    }

    /// <summary>
    /// A GNSS course before the track runs (used only at speed, with a course given, and while the course stream is not
    /// isolated): held, and it starts the track with a recent confirmed held fix.
    /// </summary>
    private MeasurementOutcome ProcessCourseBeforeStart(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        GnssVelocityView velocity = m.AsGnssVelocity();
        if (!(velocity.SpeedMps >= Options.CourseMinSpeedMps) || !velocity.HasCourse || s.Agreement.CourseIsolated)
        {
            return MeasurementOutcome.Of(OutcomeKind.BeforeStart);
        }

        double headingSigma = Math.Max(velocity.SpeedAccuracyMps / velocity.SpeedMps, Options.CourseSigmaFloorRad);
        s.Course = new HeldCourse(true, m.TimeUs, CourseToHeading(velocity.CourseRad), headingSigma, velocity.SpeedMps, velocity.SpeedAccuracyMps);
        if (s.Phase == TrackPhase.AwaitingHeading && s.Fix.Confirmed && (m.TimeUs - s.Fix.TimeUs) / MicrosecondsPerSecond <= Options.TwoFixMaxAgeS)
        {
            StartFromCourse(ref s, s.Fix, s.Course, m.TimeUs, recorder);
            return MeasurementOutcome.Of(OutcomeKind.Initialising);
        }

        return MeasurementOutcome.Of(OutcomeKind.BeforeStart);
    }

    /// <summary>A wheel speed before the track runs: tracks standing still, which starts the track at a confirmed held fix.</summary>
    private MeasurementOutcome ProcessWheelBeforeStart(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        TrackZeroSpeed(ref s, m);
        if (s.Stationary && s.Phase == TrackPhase.AwaitingHeading && s.Fix.Confirmed)
        {
            StartStationary(ref s, s.Fix, m.TimeUs, recorder);
            return MeasurementOutcome.Of(OutcomeKind.Initialising);
        }

        return MeasurementOutcome.Of(OutcomeKind.BeforeStart);
    }

    private bool CourseIsFresh(in TrackState s, long timeUs) =>
        s.Course.IsSet && (timeUs - s.Course.TimeUs) / MicrosecondsPerSecond <= 2.0;

    private void StartFromCourse(ref TrackState s, HeldFix fix, HeldCourse course, long timeUs, IStepRecorder? recorder)
    {
        // The fix and the course may be a little apart in time: carry the fix forward along the course.
        double dtS = (timeUs - fix.TimeUs) / MicrosecondsPerSecond;
        double travelled = course.SpeedMps * dtS;
        var moved = new HeldFix(
            true, timeUs,
            fix.EastM + (travelled * Math.Cos(course.HeadingRad)),
            fix.NorthM + (travelled * Math.Sin(course.HeadingRad)),
            Math.Sqrt((fix.SigmaM * fix.SigmaM) + (0.25 * travelled * travelled)));
        Start(ref s, moved, fix.SigmaM, course.HeadingRad, course.HeadingSigmaRad, course.SpeedMps, course.SpeedSigmaMps, timeUs, recorder);
    }

    private void StartStationary(ref TrackState s, HeldFix fix, long timeUs, IStepRecorder? recorder) =>
        Start(ref s, fix with { TimeUs = timeUs }, fix.SigmaM, 0.0, Math.PI / Math.Sqrt(3.0), 0.0, Options.StationarySpeedSigmaMps, timeUs, recorder);

    /// <summary>
    /// Starts the track at <paramref name="fix"/> (whose sigma may include a carry along the course), with the GNSS error
    /// states at zero: the fix reads position + correlated error + white noise with the correlated share
    /// f σ_fix² of <paramref name="fixSigmaM"/>'s variance, so the position's error is minus the fix's and its covariance
    /// with the correlated error is -f σ_fix² (derived; positive definite for 0 &lt; f &lt; 1).
    /// </summary>
    private void Start(
        ref TrackState s, HeldFix fix, double fixSigmaM, double headingRad, double headingSigmaRad, double speedMps, double speedSigmaMps,
        long timeUs, IStepRecorder? recorder)
    {
        double bias = 0.0, scale = 1.0;
        double biasVar = Profile.InitialGyroBiasSigmaRps * Profile.InitialGyroBiasSigmaRps;
        double scaleVar = Profile.InitialWheelScaleSigma * Profile.InitialWheelScaleSigma;
        if (s.HasCalibration)
        {
            bias = s.X[GyroBiasRps];
            scale = s.X[WheelScale];
            biasVar = s.P[(GyroBiasRps * N) + GyroBiasRps];
            scaleVar = s.P[(WheelScale * N) + WheelScale];
        }

        s.X = default;
        s.P = default;
        s.X[EastM] = fix.EastM;
        s.X[NorthM] = fix.NorthM;
        s.X[HeadingRad] = Angles.WrapPi(headingRad);
        s.X[SpeedMps] = speedMps;
        s.X[GyroBiasRps] = bias;
        s.X[WheelScale] = scale;
        SetVariance(ref s.P, EastM, fix.SigmaM * fix.SigmaM);
        SetVariance(ref s.P, NorthM, fix.SigmaM * fix.SigmaM);
        SetVariance(ref s.P, HeadingRad, headingSigmaRad * headingSigmaRad);
        SetVariance(ref s.P, SpeedMps, speedSigmaMps * speedSigmaMps);
        double yawSigma = s.Stationary ? Options.StationaryYawRateSigmaRps : Profile.InitialYawRateSigmaRps;
        SetVariance(ref s.P, YawRateRps, yawSigma * yawSigma);
        SetVariance(ref s.P, AccelMps2, Profile.InitialAccelSigmaMps2 * Profile.InitialAccelSigmaMps2);
        SetVariance(ref s.P, GyroBiasRps, biasVar);
        SetVariance(ref s.P, WheelScale, scaleVar);
        double correlatedVar = CorrelatedVariance(s, fixSigmaM);
        SetVariance(ref s.P, GnssErrorEastM, correlatedVar);
        SetVariance(ref s.P, GnssErrorNorthM, correlatedVar);
        SetCovariance(ref s.P, EastM, GnssErrorEastM, -correlatedVar);
        SetCovariance(ref s.P, NorthM, GnssErrorNorthM, -correlatedVar);
        s.GnssCorrelatedVarianceM2 = correlatedVar;
        s.TimeUs = timeUs;
        s.Phase = TrackPhase.Running;
        s.Fix = fix with { TimeUs = timeUs };
        s.Course = default;
        s.RejectedFixes = 0;
        s.HasCalibration = true;
        s.ImuFusedUs = timeUs;
        recorder?.Start(timeUs, s.X, s.P, s.Plane);
    }

    private static void SetVariance(ref StateMatrix p, int i, double variance) => p[(i * N) + i] = variance;

    private static void SetCovariance(ref StateMatrix p, int i, int j, double covariance)
    {
        p[(i * N) + j] = covariance;
        p[(j * N) + i] = covariance;
    }

    /// <summary>Correlated share f σ² of a fix's reported per-axis variance, square metres.</summary>
    private double CorrelatedVariance(in TrackState s, double fixSigmaM) => CorrelatedShare(s) * fixSigmaM * fixSigmaM;

    /// <summary>
    /// The GNSS error model the track <paramref name="s"/> uses now: correlated share, time constant (seconds) and whether
    /// they are the track's own fit (<see cref="NoiseProfile.GnssErrorIdentification"/>) rather than the profile's.
    /// </summary>
    public (double Share, double TimeConstantS, bool Fitted) GnssErrorModelOf(in TrackState s) =>
        (CorrelatedShare(s), ErrorTimeConstantS(s), s.GnssErrorFit.HasEstimate);

    /// <summary>
    /// The correlated share f in use: the receiver's fitted one once there is a fit; before, the pair the track started
    /// from, or the profile's.
    /// </summary>
    private double CorrelatedShare(in TrackState s) => s.GnssErrorFit.HasEstimate ? s.GnssErrorFit.Share : PriorOf(s).Share;

    /// <summary>The GNSS error time constant τ in use, seconds (see <see cref="CorrelatedShare"/>).</summary>
    private double ErrorTimeConstantS(in TrackState s) => s.GnssErrorFit.HasEstimate ? s.GnssErrorFit.TimeConstantS : PriorOf(s).TimeConstantS;

    /// <summary>The pair the receiver fit starts from: the track's own starting pair, else the profile's.</summary>
    private (double Share, double TimeConstantS) PriorOf(in TrackState s) =>
        s.GnssErrorFit.Prior(Profile.GnssCorrelatedFraction, Profile.GnssErrorTimeConstantS);

    private MeasurementOutcome ProcessRunning(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        double correlatedVar = m.Kind == SensorKind.GnssPosition ? CorrelatedVariance(s, m.AsGnssFix().AccuracyM) : double.NaN;
        PredictTo(ref s, m.TimeUs, correlatedVar, recorder);
        if (ObserveAgreement(ref s, m))
        {
            // The states the isolated stream fed were just widened: smoothing must not carry that step back into the time the
            // stream was still fused, so a new segment begins here (as at a reset), with a zero-length step into this update.
            recorder?.Start(m.TimeUs, s.X, s.P, s.Plane);
            recorder?.Predicted(StateIdentity.Value, s.X, s.P);
            s.MultipathSteps.Suppress(m.TimeUs, Options);
        }

        if (m.Kind == SensorKind.GnssVelocity && CarriedMotion.Observe(ref s, m, Options))
        {
            // The standstill constraint held the track while the vehicle was carried off: restart its motion from this GNSS
            // velocity (used, like a track start, to initialise rather than fused) and begin a new smoothing segment, so that
            // smoothing does not cross the jump in the state.
            GnssVelocityView velocity = m.AsGnssVelocity();
            bool hasCourse = velocity.SpeedMps >= Options.CourseMinSpeedMps && velocity.HasCourse;
            double courseSigma = Math.Max(velocity.SpeedAccuracyMps / velocity.SpeedMps, Options.CourseSigmaFloorRad);
            CarriedMotion.Begin(ref s, m, hasCourse ? CourseToHeading(velocity.CourseRad) : double.NaN, courseSigma, Profile.InitialAccelSigmaMps2);
            s.MultipathSteps.Clear();
            recorder?.Start(m.TimeUs, s.X, s.P, s.Plane);
            return MeasurementOutcome.Of(OutcomeKind.Initialising) with { Carried = true };
        }

        double eastBefore = s.X[EastM], northBefore = s.X[NorthM];
        MeasurementOutcome outcome = m.Kind switch
        {
            SensorKind.GnssPosition => UpdateGnssPosition(ref s, m, recorder),
            SensorKind.GnssVelocity => UpdateGnssVelocityAndStandstill(ref s, m, recorder),
            SensorKind.WheelSpeed => UpdateWheelSpeed(ref s, m, recorder),
            SensorKind.Imu => UpdateImu(ref s, m, recorder),
            _ => throw new ArgumentOutOfRangeException(nameof(m), m.Kind, "unknown sensor kind"),
        };

        if (s.Phase == TrackPhase.Running)
        {
            if (s.Carried)
            {
                outcome = outcome with { Carried = true };
            }

            if (m.Kind == SensorKind.GnssPosition)
            {
                s.MultipathSteps.Settle(0.5 * (s.P[(EastM * N) + EastM] + s.P[(NorthM * N) + NorthM]));
            }

            if (outcome.Kind == OutcomeKind.Accepted)
            {
                double de = s.X[EastM] - eastBefore, dn = s.X[NorthM] - northBefore;
                outcome = outcome with { PositionShiftM = Math.Sqrt((de * de) + (dn * dn)) };
            }

            recorder?.Posterior(s.TimeUs, s.X, s.P, s.Plane);
        }

        return outcome;
    }

    /// <summary>
    /// Feeds <paramref name="m"/> to the stream checks (<see cref="StreamAgreement"/>). When a stream has just been isolated
    /// the states it fed may be wrong with a small variance (a gyro of the wrong sign turned the heading the wrong way);
    /// their variance is raised so the streams still trusted can pull them back without a reset. Returns whether it was.
    /// </summary>
    private bool ObserveAgreement(ref TrackState s, in Measurement m)
    {
        bool gyroWasIsolated = s.Agreement.GyroIsolated, courseWasIsolated = s.Agreement.CourseIsolated;
        switch (m.Kind)
        {
            case SensorKind.Imu when !s.Carried:
                s.Agreement.ObserveImu(m);
                break;
            case SensorKind.GnssVelocity when !s.Carried:
                s.Agreement.ObserveVelocity(m, Options, s.X[GyroBiasRps]);
                break;
            case SensorKind.GnssVelocity or SensorKind.Imu:
                s.Agreement.SuspendTurn();
                break;
            case SensorKind.GnssPosition:
                s.Agreement.ObserveFix(m, Options);
                break;
        }

        bool adjusted = false;
        if (!gyroWasIsolated && s.Agreement.GyroIsolated)
        {
            s.P[(YawRateRps * N) + YawRateRps] += Profile.InitialYawRateSigmaRps * Profile.InitialYawRateSigmaRps;
            s.P[(GyroBiasRps * N) + GyroBiasRps] += Profile.InitialGyroBiasSigmaRps * Profile.InitialGyroBiasSigmaRps;
            adjusted = true;
        }

        if ((!gyroWasIsolated && s.Agreement.GyroIsolated) || (!courseWasIsolated && s.Agreement.CourseIsolated))
        {
            s.P[(HeadingRad * N) + HeadingRad] += IsolationHeadingVarianceRad2;
            adjusted = true;
        }

        // A wrong course carries the position along the wrong heading while the GNSS error states explain the growing
        // offset from the fixes; widen the position by that offset so the fix that isolated the course pulls it back. A gyro
        // of the wrong sign does the same through the turn that isolated it, which ends at a GNSS velocity sample: the
        // first fix after it (none accepted since) widens it. The error states' estimate is part of that explanation: they
        // start again from their stationary distribution.
        bool courseJustIsolated = !courseWasIsolated && s.Agreement.CourseIsolated;
        bool firstFixSinceGyroIsolated = s.Agreement.GyroIsolated && s.Fix.TimeUs < s.Agreement.GyroIsolatedSinceUs;
        if ((courseJustIsolated || firstFixSinceGyroIsolated) && m.Kind == SensorKind.GnssPosition)
        {
            GnssFixView gnssFix = m.AsGnssFix();
            EnuPoint fix = s.Plane.ToEnu(GeodeticPoint.FromDegrees(gnssFix.LatitudeDeg, gnssFix.LongitudeDeg));
            double offsetEastM = fix.EastM - s.X[EastM], offsetNorthM = fix.NorthM - s.X[NorthM];
            s.P[(EastM * N) + EastM] += offsetEastM * offsetEastM;
            s.P[(NorthM * N) + NorthM] += offsetNorthM * offsetNorthM;
            RestartErrorState(ref s, GnssErrorEastM);
            RestartErrorState(ref s, GnssErrorNorthM);
            adjusted = true;
        }

        return adjusted;
    }

    /// <summary>
    /// Whether a gated fix says the GNSS error states are stale rather than the fix wrong: judged against the position alone
    /// with the error at its stationary distribution N(0, f σ²) — the error states' estimate ignored — the fix passes the
    /// 99 % chi-square gate, and it is the <see cref="TrackOptions.ErrorRestartAfterFixes"/>-th such fix in a row. A multipath
    /// bias of 15-60 m held for a while is absorbed by the error states (the fixes agree with each other); when the
    /// episode ends the clean fixes disagree with position + absorbed bias and were gated until it decayed. A one-off
    /// outlier is not enough, and a new episode's biased fixes fail the test against the stationary error.
    /// </summary>
    private bool ErrorStateLooksStale(ref TrackState s, ReadOnlySpan<double> residual, double whiteVar)
    {
        double e = residual[0] + s.X[GnssErrorEastM], n = residual[1] + s.X[GnssErrorNorthM];
        double stationary = s.GnssCorrelatedVarianceM2;
        double s00 = s.P[(EastM * N) + EastM] + stationary + whiteVar;
        double s11 = s.P[(NorthM * N) + NorthM] + stationary + whiteVar;
        double s01 = s.P[(EastM * N) + NorthM];
        double nisAgainstStationary = ((s11 * e * e) - (2 * s01 * e * n) + (s00 * n * n)) / ((s00 * s11) - (s01 * s01));
        if (!(nisAgainstStationary <= ErrorRestartGate.Threshold(2)))
        {
            s.StaleErrorEvidence = 0;
            return false;
        }

        if (++s.StaleErrorEvidence < Options.ErrorRestartAfterFixes)
        {
            return false;
        }

        s.StaleErrorEvidence = 0;
        return true;
    }

    private static readonly ChiSquareGate ErrorRestartGate = new(0.99);

    private static void RestartErrorState(ref TrackState s, int i)
    {
        s.X[i] = 0;
        for (int j = 0; j < N; j++)
        {
            s.P[(i * N) + j] = 0;
            s.P[(j * N) + i] = 0;
        }

        s.P[(i * N) + i] = s.GnssCorrelatedVarianceM2;
    }

    /// <summary>Variance added to the heading when a stream that fed it is isolated, rad² (0.5 rad, about 30 degrees, squared).</summary>
    private const double IsolationHeadingVarianceRad2 = 0.25;

    /// <summary>
    /// Predicts to <paramref name="timeUs"/>. A GNSS fix about to be fused gives <paramref name="correlatedVarianceM2"/>,
    /// the correlated share of its reported variance: the error states' stationary variance follows it, any rise added as
    /// process noise at the end of the prediction (see <see cref="GnssErrorModel"/>); NaN leaves it as it is.
    /// </summary>
    private void PredictTo(ref TrackState s, long timeUs, double correlatedVarianceM2, IStepRecorder? recorder)
    {
        // The composite transition is only needed by a recorder (smoothing) or a re-anchoring; skip building it otherwise.
        StateMatrix total = default;
        bool reanchor = Math.Abs(s.X[EastM]) > Options.ReanchorRadiusM || Math.Abs(s.X[NorthM]) > Options.ReanchorRadiusM;
        if (recorder is not null || reanchor)
        {
            total = StateIdentity.Value;
        }

        if (reanchor)
        {
            Reanchor(ref s, ref total);
        }

        double remainingS = (timeUs - s.TimeUs) / MicrosecondsPerSecond;
        bool totalIsIdentity = !reanchor;
        double tauS = ErrorTimeConstantS(s);
        while (remainingS > 0)
        {
            double stepS = Math.Min(remainingS, Options.MaxPredictionStepS);
            StateVector prior = s.X;
            CtraMotionModel.Predict(ref s.X, stepS, out StateMatrix f);
            GnssErrorModel.Predict(ref s.X, ref f, stepS, tauS);
            ExtendedKalmanFilter.PropagateCovariance(ref s.P, f);
            CtraMotionModel.AddProcessNoise(ref s.P, prior, stepS, Profile, s.Stationary);
            GnssErrorModel.AddProcessNoise(ref s.P, stepS, tauS, s.GnssCorrelatedVarianceM2);
            if (recorder is not null)
            {
                // F I = F: the usual single step needs no product.
                total = totalIsIdentity ? f : MatrixKernels.MultiplySkippingZeros(f, total);
                totalIsIdentity = false;
            }

            remainingS -= stepS;
        }

        if (correlatedVarianceM2 > s.GnssCorrelatedVarianceM2)
        {
            double rise = correlatedVarianceM2 - s.GnssCorrelatedVarianceM2;
            s.P[(GnssErrorEastM * N) + GnssErrorEastM] += rise;
            s.P[(GnssErrorNorthM * N) + GnssErrorNorthM] += rise;
        }

        if (!double.IsNaN(correlatedVarianceM2))
        {
            s.GnssCorrelatedVarianceM2 = correlatedVarianceM2;
        }

        s.TimeUs = timeUs;
        recorder?.Predicted(total, s.X, s.P);
    }

    /// <summary>
    /// Moves the local plane's anchor to the current position: position becomes (0, 0) and heading turns by the
    /// convergence between the two planes; the covariance is rotated with it, so the output does not jump.
    /// </summary>
    private static void Reanchor(ref TrackState s, ref StateMatrix jacobian)
    {
        s.GnssErrorFit.Break();
        double e = s.X[EastM], n = s.X[NorthM], heading = s.X[HeadingRad];
        GeodeticPoint here = s.Plane.ToGeodetic(OnPlane(e, n));
        GeodeticPoint ahead = s.Plane.ToGeodetic(OnPlane(e + Math.Cos(heading), n + Math.Sin(heading)));
        var plane = new LocalTangentPlane(here with { HeightM = 0 });
        EnuPoint aheadEnu = plane.ToEnu(ahead);
        double turn = Angles.WrapPi(Math.Atan2(aheadEnu.NorthM, aheadEnu.EastM) - heading);
        double c = Math.Cos(turn), si = Math.Sin(turn);

        StateMatrix j = StateIdentity.Value;
        j[(EastM * N) + EastM] = c;
        j[(EastM * N) + NorthM] = -si;
        j[(NorthM * N) + EastM] = si;
        j[(NorthM * N) + NorthM] = c;
        j[(GnssErrorEastM * N) + GnssErrorEastM] = c;
        j[(GnssErrorEastM * N) + GnssErrorNorthM] = -si;
        j[(GnssErrorNorthM * N) + GnssErrorEastM] = si;
        j[(GnssErrorNorthM * N) + GnssErrorNorthM] = c;
        double errorEast = s.X[GnssErrorEastM], errorNorth = s.X[GnssErrorNorthM];
        s.X[GnssErrorEastM] = (c * errorEast) - (si * errorNorth);
        s.X[GnssErrorNorthM] = (si * errorEast) + (c * errorNorth);
        s.X[EastM] = 0;
        s.X[NorthM] = 0;
        s.X[HeadingRad] = Angles.WrapPi(heading + turn);
        ExtendedKalmanFilter.PropagateCovariance(ref s.P, j);
        if (s.Fix.IsSet)
        {
            EnuPoint fix = plane.ToEnu(s.Plane.ToGeodetic(OnPlane(s.Fix.EastM, s.Fix.NorthM)));
            s.Fix = s.Fix with { EastM = fix.EastM, NorthM = fix.NorthM };
        }

        s.Plane = plane;
        jacobian = MatrixKernels.MultiplySkippingZeros(j, jacobian);
    }

    private MeasurementOutcome UpdateGnssPosition(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        GnssFixView gnssFix = m.AsGnssFix();
        EnuPoint enu = s.Plane.ToEnu(GeodeticPoint.FromDegrees(gnssFix.LatitudeDeg, gnssFix.LongitudeDeg));
        double sigma = gnssFix.AccuracyM;
        Span<double> residual = [enu.EastM - (s.X[EastM] + s.X[GnssErrorEastM]), enu.NorthM - (s.X[NorthM] + s.X[GnssErrorNorthM])];
        Span<double> h = stackalloc double[2 * N];
        h.Clear();
        h[EastM] = 1.0;
        h[GnssErrorEastM] = 1.0;
        h[N + NorthM] = 1.0;
        h[N + GnssErrorNorthM] = 1.0;
        double whiteVar = (1.0 - CorrelatedShare(s)) * sigma * sigma;
        Span<double> r = [whiteVar, 0, 0, whiteVar];
        double threshold = Gate.Threshold(2);
        Span<double> whitened = [double.NaN, double.NaN];
        // The step test needs the track carried between fixes by the wheels (and gyro): with GNSS alone the prediction
        // between fixes is the fixes' own Doppler, and a turn or a stop looks like a step.
        bool setAside = !s.Carried && HasWheelSpeed(s, m.TimeUs) && s.MultipathSteps.Observe(
            m.TimeUs, enu.EastM, enu.NorthM, s.X[EastM], s.X[NorthM], s.X[GnssErrorEastM], s.X[GnssErrorNorthM], whiteVar,
            0.5 * (s.P[(EastM * N) + EastM] + s.P[(NorthM * N) + NorthM]), s.GnssCorrelatedVarianceM2, ErrorTimeConstantS(s), _stepThreshold, Options);
        double eastBefore = s.X[EastM], northBefore = s.X[NorthM];
        // A fix of a suspected multipath episode is judged (its NIS) but never fused, and never taken as showing the error
        // states stale: the episode's bias is what they must not absorb.
        bool accepted = Update(ref s, residual, h, r, setAside ? double.NegativeInfinity : threshold, out double nis, recorder, whitened);
        bool restarted = false;
        if (!accepted && !setAside && ErrorStateLooksStale(ref s, residual, whiteVar))
        {
            // The error states hold a bias the fixes no longer show (a multipath episode ended): start them again from their
            // stationary distribution and take this fix against that.
            RestartErrorState(ref s, GnssErrorEastM);
            RestartErrorState(ref s, GnssErrorNorthM);
            recorder?.Start(m.TimeUs, s.X, s.P, s.Plane);
            recorder?.Predicted(StateIdentity.Value, s.X, s.P);
            residual[0] = enu.EastM - s.X[EastM];
            residual[1] = enu.NorthM - s.X[NorthM];
            accepted = Update(ref s, residual, h, r, threshold, out nis, recorder, whitened);
            restarted = true;
        }

        var fix = new HeldFix(true, m.TimeUs, enu.EastM, enu.NorthM, sigma);
        IdentifyGnssError(ref s, fix, accepted && !gnssFix.AccuracyFromHdop);
        if (accepted)
        {
            s.MultipathSteps.AddPull(s.X[EastM] - eastBefore, s.X[NorthM] - northBefore);
            s.RejectedFixes = 0;
            s.StaleErrorEvidence = 0;
            if (ReacquireHeading(ref s, fix))
            {
                recorder?.Adjusted();
            }

            s.Fix = fix;
            return new MeasurementOutcome(OutcomeKind.Accepted, nis, 2, threshold, s.Stationary, 0) { ErrorRestarted = restarted }.WithInnovation(residual, whitened);
        }

        if (s.RejectedFixes == 0)
        {
            s.RejectedSinceUs = m.TimeUs;
        }

        s.RejectedFixes++;
        double offsetM = Math.Sqrt((residual[0] * residual[0]) + (residual[1] * residual[1]));
        // A van whose wheels and standstill constraint say it stands is relocated on positions alone only after a much
        // longer disagreement: multipath beside a building biases fixes by tens of metres for tens of seconds, while a
        // van really moved with its wheels still would have shown GNSS speed and been followed as carried.
        double resetAfterS = s.Stationary ? Options.ResetAfterStationaryS : Options.ResetAfterS;
        bool sustained = (m.TimeUs - s.RejectedSinceUs) / MicrosecondsPerSecond >= resetAfterS
            && s.RejectedFixes >= Options.ResetMinRejectedFixes
            && offsetM >= Options.ResetDistanceM;
        if (!sustained)
        {
            double rejectedS = (m.TimeUs - s.RejectedSinceUs) / MicrosecondsPerSecond;
            double recoverAfterS = s.Stationary ? Options.ResetAfterStationaryS : Options.RecoverPositionAfterS;
            if (rejectedS >= recoverAfterS && s.RejectedFixes >= Options.ResetMinRejectedFixes)
            {
                return RecoverPosition(ref s, m, fix, residual, whitened, nis, threshold, recorder);
            }

            return new MeasurementOutcome(OutcomeKind.Gated, nis, 2, threshold, s.Stationary, 0) { MultipathSuspected = setAside }.WithInnovation(residual, whitened);
        }

        // A real relocation (ferry, tow truck, long tunnel): start again from this fix, keeping the calibration.
        s.Resets++;
        s.Phase = TrackPhase.AwaitingHeading;
        s.Plane = new LocalTangentPlane(GeodeticPoint.FromDegrees(gnssFix.LatitudeDeg, gnssFix.LongitudeDeg));
        s.Fix = new HeldFix(true, m.TimeUs, 0, 0, sigma);
        s.Course = default;
        s.RejectedFixes = 0;
        s.MultipathSteps.Clear();
        return new MeasurementOutcome(OutcomeKind.TrackReset, nis, 2, threshold, s.Stationary, offsetM).WithInnovation(residual, whitened);
    }

    /// <summary>
    /// Feeds the receiver's error fit (<see cref="GnssErrorVariogram"/>) with an accepted fix of a standing vehicle; any
    /// other fix ends its chains of pairs. A fix whose accuracy was derived from HDOP × an assumed UERE is not offered
    /// (<paramref name="accepted"/> false): the fit divides each difference by the stated variance, so a UERE that is
    /// a few per cent off reads as a shorter, whiter error (a receiver whose true error was 6 % above HDOP × UERE was
    /// fitted to f 0.72, τ 59 s where its error had 0.75, 60 s, and its ellipse held 92.6 / 91.5 %;
    /// `./build.sh bench consistency 64 hdop fitted`, docs/estimation.md).
    /// </summary>
    private void IdentifyGnssError(ref TrackState s, HeldFix fix, bool accepted)
    {
        if (!Profile.GnssErrorIdentification)
        {
            return;
        }

        if (accepted && s.Stationary && !s.Carried)
        {
            var (priorShare, priorTimeConstantS) = PriorOf(s);
            s.GnssErrorFit.Observe(fix.TimeUs, fix.EastM, fix.NorthM, fix.SigmaM * fix.SigmaM, priorShare, priorTimeConstantS);
        }
        else
        {
            s.GnssErrorFit.Break();
        }
    }

    /// <summary>
    /// Fixes have disagreed with the track for longer than a multipath episode lasts (<see cref="TrackOptions.RecoverPositionAfterS"/>)
    /// but by less than a relocation (<see cref="TrackOptions.ResetDistanceM"/>): the track, not the fixes, is wrong (it
    /// started inside a multipath episode, say). The position's variance is raised by the squared offset on each axis and
    /// the GNSS error states start again (covariance inflation, as for the motion sensors), the fix is fused, and a new
    /// smoothing segment begins so the jump is not smoothed back into the time before.
    /// </summary>
    private MeasurementOutcome RecoverPosition(
        ref TrackState s, in Measurement m, HeldFix fix, Span<double> residual, ReadOnlySpan<double> whitened, double nis, double threshold,
        IStepRecorder? recorder)
    {
        // Offset of the fix from the position itself (the error states' estimate goes with the restart).
        Span<double> offset = [residual[0] + s.X[GnssErrorEastM], residual[1] + s.X[GnssErrorNorthM]];
        s.P[(EastM * N) + EastM] += offset[0] * offset[0];
        s.P[(NorthM * N) + NorthM] += offset[1] * offset[1];
        RestartErrorState(ref s, GnssErrorEastM);
        RestartErrorState(ref s, GnssErrorNorthM);
        recorder?.Start(m.TimeUs, s.X, s.P, s.Plane);
        recorder?.Predicted(StateIdentity.Value, s.X, s.P);
        Span<double> h = stackalloc double[2 * N];
        h.Clear();
        h[EastM] = 1.0;
        h[GnssErrorEastM] = 1.0;
        h[N + NorthM] = 1.0;
        h[N + GnssErrorNorthM] = 1.0;
        double whiteVar = (1.0 - CorrelatedShare(s)) * fix.SigmaM * fix.SigmaM;
        Span<double> r = [whiteVar, 0, 0, whiteVar];
        Update(ref s, offset, h, r, double.PositiveInfinity, out _, recorder);
        s.RejectedFixes = 0;
        s.StaleErrorEvidence = 0;
        s.MultipathSteps.Clear();
        s.Fix = fix;
        double shiftM = Math.Sqrt((offset[0] * offset[0]) + (offset[1] * offset[1]));
        return new MeasurementOutcome(OutcomeKind.Accepted, nis, 2, threshold, s.Stationary, shiftM) { Recovered = true }.WithInnovation(residual, whitened);
    }

    /// <summary>
    /// A track started at a standstill has no heading; once it moves, two accepted fixes far enough apart give one.
    /// Returns whether it did.
    /// </summary>
    private bool ReacquireHeading(ref TrackState s, HeldFix fix)
    {
        double headingVar = s.P[(HeadingRad * N) + HeadingRad];
        if (headingVar <= Options.HeadingReacquireSigmaRad * Options.HeadingReacquireSigmaRad
            || !s.Fix.IsSet
            || Math.Abs(s.X[SpeedMps]) < Options.CourseMinSpeedMps)
        {
            return false;
        }

        double dtS = (fix.TimeUs - s.Fix.TimeUs) / MicrosecondsPerSecond;
        double de = fix.EastM - s.Fix.EastM, dn = fix.NorthM - s.Fix.NorthM;
        double distanceM = Math.Sqrt((de * de) + (dn * dn));
        double sigmaM = Math.Sqrt((fix.SigmaM * fix.SigmaM) + (s.Fix.SigmaM * s.Fix.SigmaM));
        if (dtS <= 0 || dtS > Options.TwoFixMaxAgeS || distanceM <= Options.TwoFixHeadingSigmas * sigmaM)
        {
            return false;
        }

        s.X[HeadingRad] = Math.Atan2(dn, de);
        for (int i = 0; i < N; i++)
        {
            s.P[(HeadingRad * N) + i] = 0;
            s.P[(i * N) + HeadingRad] = 0;
        }

        double sigmaHeading = sigmaM / distanceM;
        s.P[(HeadingRad * N) + HeadingRad] = sigmaHeading * sigmaHeading;
        return true;
    }

    /// <summary>Whether the vehicle has reported wheel speed within <see cref="TrackOptions.NoWheelAfterS"/> of <paramref name="timeUs"/>.</summary>
    private bool HasWheelSpeed(in TrackState s, long timeUs) =>
        s.LastWheelUs != long.MinValue && (timeUs - s.LastWheelUs) / MicrosecondsPerSecond <= Options.NoWheelAfterS;

    /// <summary>
    /// GNSS velocity, and for a vehicle that sends no wheel speed (none for <see cref="TrackOptions.NoWheelAfterS"/>) the
    /// standstill from Doppler instead: speed at most <see cref="TrackOptions.GnssStillSpeedMps"/> (with a speed accuracy no
    /// worse than that) for <see cref="TrackOptions.StationaryAfterS"/> applies the stationary constraint, as zero wheel
    /// speed does (zero-velocity updates from GNSS Doppler; common practice). Without it a wheel-less van at a stop
    /// integrated its Doppler noise into phantom motion that the GNSS error states then explained (61 % containment).
    /// </summary>
    private MeasurementOutcome UpdateGnssVelocityAndStandstill(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        MeasurementOutcome outcome = UpdateGnssVelocity(ref s, m, recorder);
        if (HasWheelSpeed(s, m.TimeUs))
        {
            return outcome;
        }

        GnssVelocityView velocity = m.AsGnssVelocity();
        bool still = Math.Abs(velocity.SpeedMps) <= Options.GnssStillSpeedMps && velocity.SpeedAccuracyMps <= Options.GnssStillSpeedMps;
        if (!still)
        {
            s.GnssStillSinceUs = long.MinValue;
            StartMoving(ref s, m.TimeUs);
            return outcome;
        }

        if (s.GnssStillSinceUs == long.MinValue)
        {
            s.GnssStillSinceUs = m.TimeUs;
        }

        s.Stationary = (m.TimeUs - s.GnssStillSinceUs) / MicrosecondsPerSecond >= Options.StationaryAfterS;
        if (s.Stationary)
        {
            ApplyStationaryConstraint(ref s, recorder);
        }

        return outcome with { Stationary = s.Stationary };
    }

    private MeasurementOutcome UpdateGnssVelocity(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        GnssVelocityView velocity = m.AsGnssVelocity();
        double speed = velocity.SpeedMps, speedSigma = velocity.SpeedAccuracyMps;
        bool hasCourse = speed >= Options.CourseMinSpeedMps && velocity.HasCourse;
        if (hasCourse && s.Agreement.CourseIsolated)
        {
            Span<double> speedOnly = [speed - s.X[SpeedMps]];
            Span<double> speedVar = [speedSigma * speedSigma];
            Span<double> h1 = stackalloc double[N];
            h1.Clear();
            h1[SpeedMps] = 1.0;
            return Gated(ref s, ref s.VelocityRejections, speedOnly, h1, speedVar, SpeedMps, -1, recorder) with { Isolated = true };
        }

        bool useCourse = hasCourse;

        Span<double> h = stackalloc double[2 * N];
        h.Clear();
        h[SpeedMps] = 1.0;
        if (!useCourse)
        {
            Span<double> residual1 = [speed - s.X[SpeedMps]];
            Span<double> r1 = [speedSigma * speedSigma];
            return Gated(ref s, ref s.VelocityRejections, residual1, h[..N], r1, SpeedMps, -1, recorder);
        }

        double courseSigma = Math.Max(speedSigma / speed, Options.CourseSigmaFloorRad);
        h[N + HeadingRad] = 1.0;
        Span<double> residual = [speed - s.X[SpeedMps], Angles.WrapPi(CourseToHeading(velocity.CourseRad) - s.X[HeadingRad])];
        Span<double> r = [speedSigma * speedSigma, 0, 0, courseSigma * courseSigma];
        return Gated(ref s, ref s.VelocityRejections, residual, h, r, SpeedMps, HeadingRad, recorder);
    }

    private MeasurementOutcome UpdateWheelSpeed(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        if (s.Carried && !CarriedMotion.WheelsTurn(ref s, m, Options))
        {
            return MeasurementOutcome.Of(OutcomeKind.Unused);
        }

        double v = s.X[SpeedMps], k = s.X[WheelScale];
        Span<double> residual = [m.AsWheelSpeed().SpeedMps - (v * k)];
        Span<double> h = stackalloc double[N];
        h.Clear();
        h[SpeedMps] = k;
        h[WheelScale] = v;
        double sigma = Profile.WheelSpeedSigmaMps;
        Span<double> r = [sigma * sigma];
        MeasurementOutcome outcome = Gated(ref s, ref s.WheelRejections, residual, h, r, SpeedMps, -1, recorder);

        bool wasStationary = s.Stationary;
        TrackZeroSpeed(ref s, m);
        if (s.Stationary)
        {
            ApplyStationaryConstraint(ref s, recorder);
        }

        return outcome with { Stationary = s.Stationary || wasStationary };
    }

    private void TrackZeroSpeed(ref TrackState s, in Measurement m)
    {
        s.LastWheelUs = m.TimeUs;
        s.LastWheelSpeedMps = Math.Abs(m.AsWheelSpeed().SpeedMps);
        s.GnssStillSinceUs = long.MinValue;
        if (s.LastWheelSpeedMps > Options.ZeroSpeedThresholdMps)
        {
            s.WheelZeroSinceUs = long.MinValue;
            StartMoving(ref s, m.TimeUs);
            return;
        }

        if (s.WheelZeroSinceUs == long.MinValue)
        {
            s.WheelZeroSinceUs = m.TimeUs;
        }

        s.Stationary = (m.TimeUs - s.WheelZeroSinceUs) / MicrosecondsPerSecond >= Options.StationaryAfterS;
    }

    /// <summary>
    /// The track is no longer held still. A disagreement of the fixes that began while it stood is timed again from now:
    /// the moving track's rules (<see cref="TrackOptions.RecoverPositionAfterS"/>, <see cref="TrackOptions.ResetAfterS"/>)
    /// ask for that long a disagreement while moving. Counted from the stop instead, a multipath episode of 36 s at a stop
    /// and 25 s after it moved the track onto the biased fixes 37 m off (64-seed consistency report, multipath seed 4502).
    /// </summary>
    private static void StartMoving(ref TrackState s, long timeUs)
    {
        if (s.Stationary && s.RejectedFixes > 0)
        {
            s.RejectedSinceUs = timeUs;
        }

        s.Stationary = false;
    }

    /// <summary>Zero-velocity pseudo-measurement: speed 0 and yaw rate 0 with small noise, never gated.</summary>
    private void ApplyStationaryConstraint(ref TrackState s, IStepRecorder? recorder)
    {
        Span<double> residual = [-s.X[SpeedMps], -s.X[YawRateRps]];
        Span<double> h = stackalloc double[2 * N];
        h.Clear();
        h[SpeedMps] = 1.0;
        h[N + YawRateRps] = 1.0;
        double sv = Options.StationarySpeedSigmaMps, sw = Options.StationaryYawRateSigmaRps;
        Span<double> r = [sv * sv, 0, 0, sw * sw];
        Update(ref s, residual, h, r, double.PositiveInfinity, out _, recorder);
    }

    private MeasurementOutcome UpdateImu(ref TrackState s, in Measurement m, IStepRecorder? recorder)
    {
        if (s.Agreement.GyroIsolated)
        {
            return MeasurementOutcome.Of(OutcomeKind.Unused) with { Isolated = true };
        }

        Span<double> h = stackalloc double[2 * N];
        h.Clear();
        h[YawRateRps] = 1.0;
        h[GyroBiasRps] = 1.0;
        double gyroVar = Profile.GyroSigmaRps * Profile.GyroSigmaRps;
        ImuView imu = m.AsImu();
        double yawResidual = imu.YawRateRps - (s.X[YawRateRps] + s.X[GyroBiasRps]);
        if (!imu.HasAccel)
        {
            Span<double> residual1 = [yawResidual];
            Span<double> r1 = [gyroVar];
            return Fused(ref s, m, Gated(ref s, ref s.ImuRejections, residual1, h[..N], r1, YawRateRps, -1, recorder));
        }

        h[N + AccelMps2] = 1.0;
        double accelVar = Profile.AccelSigmaMps2 * Profile.AccelSigmaMps2;
        Span<double> residual = [yawResidual, imu.AccelMps2 - s.X[AccelMps2]];
        Span<double> r = [gyroVar, 0, 0, accelVar];
        return Fused(ref s, m, Gated(ref s, ref s.ImuRejections, residual, h, r, YawRateRps, AccelMps2, recorder, RateHeldS(s, m)));

        static MeasurementOutcome Fused(ref TrackState s, in Measurement m, MeasurementOutcome outcome)
        {
            if (outcome.Kind == OutcomeKind.Accepted)
            {
                s.ImuFusedUs = m.TimeUs;
            }

            return outcome;
        }
    }

    /// <summary>
    /// For a vehicle without wheel speed, whose speed between Doppler samples rests on the acceleration: how long the
    /// acceleration state has gone without an inertial sample fused, seconds, since the last one fused (or the track's
    /// start), at most one prediction step (<see cref="TrackOptions.MaxPredictionStepS"/>; over a longer gap the process
    /// noise has already widened it). Zero with wheel speed, which measures the speed ten times a second.
    /// </summary>
    private double RateHeldS(in TrackState s, in Measurement m) => HasWheelSpeed(s, m.TimeUs)
        ? 0.0
        : Math.Clamp((m.TimeUs - s.ImuFusedUs) / MicrosecondsPerSecond, 0.0, Options.MaxPredictionStepS);

    /// <summary>
    /// Gated update of a motion sensor. A single rejection is an outlier; <see cref="TrackOptions.RecoverAfterRejections"/>
    /// rejections in a row mean the motion changed faster than the process noise allows (a hard brake, a sharp turn-in):
    /// then the variance of the dynamic state each row observes (<paramref name="first"/>, <paramref name="second"/>;
    /// never a calibration state) is raised by the squared residual and the measurement is fused, so the track follows
    /// instead of rejecting every later sample (covariance inflation; Bar-Shalom, Li and Kirubarajan 2001, section 11.2,
    /// fading memory and adaptive noise; from memory). An acceleration that was wrong by the residual for part of
    /// <paramref name="rateHeldS"/> has put up to residual × that time into the speed too, whose variance is raised by the
    /// mean square of that drift (only without wheel speed, see <see cref="RateHeldS"/>).
    /// </summary>
    private MeasurementOutcome Gated(
        ref TrackState s, ref int rejections, ReadOnlySpan<double> residual, ReadOnlySpan<double> h, ReadOnlySpan<double> r, int first, int second,
        IStepRecorder? recorder, double rateHeldS = 0.0)
    {
        int dim = residual.Length;
        double threshold = Gate.Threshold(dim);
        Span<double> whitened = [double.NaN, double.NaN, double.NaN];
        if (Update(ref s, residual, h, r, threshold, out double nis, recorder, whitened[..dim]))
        {
            rejections = 0;
            return new MeasurementOutcome(OutcomeKind.Accepted, nis, dim, threshold, s.Stationary, 0).WithInnovation(residual, whitened);
        }

        if (++rejections < Options.RecoverAfterRejections)
        {
            return new MeasurementOutcome(OutcomeKind.Gated, nis, dim, threshold, s.Stationary, 0).WithInnovation(residual, whitened);
        }

        for (int row = 0; row < dim; row++)
        {
            int index = row == 0 ? first : second;
            double gain = index >= 0 ? h[(row * N) + index] : 0;
            if (gain != 0)
            {
                s.P[(index * N) + index] += residual[row] * residual[row] / (gain * gain);
                if (index == AccelMps2 && rateHeldS > 0)
                {
                    // The acceleration changed at an unknown instant of the held time, uniform over it: the speed drifted by
                    // residual × u × held time, u ~ U(0, 1), whose mean square is residual² × held time² / 3.
                    double heldAccelErrorMps2 = residual[row] / gain;
                    s.P[(SpeedMps * N) + SpeedMps] += heldAccelErrorMps2 * heldAccelErrorMps2 * rateHeldS * rateHeldS / 3.0;
                }
            }
        }

        rejections = 0;
        recorder?.Adjusted();
        Update(ref s, residual, h, r, double.PositiveInfinity, out _, recorder);
        return new MeasurementOutcome(OutcomeKind.Accepted, nis, dim, threshold, s.Stationary, 0) { Recovered = true }.WithInnovation(residual, whitened);
    }

    /// <summary>
    /// <see cref="ExtendedKalmanFilter.UpdateJosephGated(ref StateVector, ref StateMatrix, ReadOnlySpan{double}, ReadOnlySpan{double}, ReadOnlySpan{double}, double, out double, ref UpdateFactors, bool)"/>
    /// on the track's state; an applied update's factors go to the recorder, if any. <paramref name="whitened"/> receives
    /// the whitened innovation L⁻¹ ν (S = L Lᵀ), gated or not.
    /// </summary>
    private static bool Update(
        ref TrackState s, ReadOnlySpan<double> residual, ReadOnlySpan<double> h, ReadOnlySpan<double> r, double threshold, out double nis,
        IStepRecorder? recorder, Span<double> whitened = default)
    {
        UpdateFactors factors = default;
        bool applied = ExtendedKalmanFilter.UpdateJosephGated(
            ref s.X, ref s.P, residual, h, r, threshold, out nis, ref factors, captureFactors: recorder is not null) == GateDecision.Accepted;
        ((ReadOnlySpan<double>)factors.Whitened)[..Math.Min(whitened.Length, factors.Dimension)].CopyTo(whitened);
        if (applied)
        {
            recorder?.Updated(factors);
        }

        return applied;
    }

    /// <summary>GNSS course (clockwise from north) to the filter's heading (counter-clockwise from east).</summary>
    public static double CourseToHeading(double courseRad) => Angles.WrapPi((0.5 * Math.PI) - courseRad);

    /// <summary>The filter's heading to a course (clockwise from north) in [0, 2π).</summary>
    public static double HeadingToCourse(double headingRad)
    {
        double course = (0.5 * Math.PI) - headingRad;
        course %= 2.0 * Math.PI;
        return course < 0 ? course + (2.0 * Math.PI) : course;
    }
}
