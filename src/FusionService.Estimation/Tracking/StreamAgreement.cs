using FusionService.Estimation.Geodesy;
using FusionService.Estimation.Measurements;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// Checks each heading source against an independent one and isolates a stream that keeps disagreeing: fault detection
/// and isolation by analytical redundancy (Chow and Willsky 1984, "Analytical redundancy and the design of robust failure
/// detection systems", IEEE TAC 29(7); Gertler 1998, "Fault Detection and Diagnosis in Engineering Systems", ch. 1).
/// The filter's own innovations cannot do this: a wrong stream that is fused drags the state towards itself, after which
/// the right streams look wrong (it happened: a gyro with the wrong sign made the GNSS fixes the "inconsistent" stream).
/// So the checks compare raw measurements with raw measurements, never with the state:
/// <list type="bullet">
/// <item>GNSS course against the GNSS fixes: the bearing of the chord between two fixes at least
/// <see cref="TrackOptions.ChordMinLengthM"/> apart against the mean course in between (on a steady turn the chord runs
/// along the heading at its middle). The correlated part of the position error cancels in the chord. The median of the
/// last <see cref="ChordOffsetRing.Length"/> offsets beyond <see cref="TrackOptions.CourseIsolateOffsetRad"/> isolates the
/// course; below <see cref="TrackOptions.CourseReadmitOffsetRad"/> re-admits it. The median ignores the chords that span
/// the start or end of a multipath episode.</item>
/// <item>Gyro against GNSS course: over each turn of at least <see cref="TrackOptions.TurnMinRad"/> seen by the course,
/// the integrated yaw rate (less the filter's bias estimate) must match the course's change within
/// <see cref="TrackOptions.TurnToleranceRad"/> plus <see cref="TrackOptions.TurnToleranceFraction"/> of the turn.
/// <see cref="TrackOptions.IsolateAfterDisagreements"/> disagreeing turns in a row isolate the gyro,
/// <see cref="TrackOptions.ReadmitAfterAgreements"/> agreeing ones re-admit it. Judged only while the course itself is
/// trusted: the chain of evidence starts at the positions.</item>
/// </list>
/// A wheel channel scaled wrong needs no isolation: the wheel-scale state absorbs it and the wheel-scale alert names it.
/// Part of <see cref="TrackState"/> (a value: checkpoints and replays carry it). No I/O.
/// </summary>
public struct StreamAgreement
{
    private const double MicrosecondsPerSecond = 1e6;
    private const double MaxImuGapS = 0.5;
    private const double MaxCourseGapS = 2.5;
    private const double MaxTurnWindowS = 20.0;
    private const double MaxChordS = 20.0;
    private const int MinCourseSamplesPerChord = 3;
    private const int MinOffsetsForVerdict = 2;

    // A multipath episode corrupts at most the two chords that span its start and its end (a steady bias cancels in the
    // chords inside it), and those two lean opposite ways: the bias enters one and leaves the other. The median of five
    // tolerates both; below five offsets every one must lean the same way beyond the threshold. Judged on the median of
    // two, a drive that began inside an episode had its right course isolated 10-12 s in (3 of 64 multipath drives).
    private const int MinOffsetsForMedian = 5;
    private const double ChordSigmas = 8.0;
    private const double MetresPerRadian = 6_371_008.8;

    /// <summary>Whether the gyro (the whole inertial stream) is isolated: not fused until it agrees again.</summary>
    public bool GyroIsolated;

    /// <summary>When the gyro was isolated, Unix microseconds; valid while <see cref="GyroIsolated"/>.</summary>
    public long GyroIsolatedSinceUs;

    /// <summary>Whether the GNSS course is isolated: GNSS velocity is then fused as speed only.</summary>
    public bool CourseIsolated;

    /// <summary>When the course was isolated, Unix microseconds; valid while <see cref="CourseIsolated"/>.</summary>
    public long CourseIsolatedSinceUs;


    /// <summary>Consecutive turns on which gyro and course disagreed.</summary>
    public int TurnDisagreements;

    /// <summary>Consecutive turns on which gyro and course agreed.</summary>
    public int TurnAgreements;

    /// <summary>The last judged turn: integrated gyro minus course change, radians (NaN before the first).</summary>
    public double LastTurnMismatchRad;

    /// <summary>The course change over the last judged turn, radians (counter-clockwise positive; NaN before the first).</summary>
    public double LastTurnRad;

    /// <summary>Median offset of chord bearing from mean course over the last chords, radians (NaN before enough chords).</summary>
    public double CourseOffsetRad;

    /// <summary>Start of the open turn window, Unix microseconds, or <see cref="long.MinValue"/> when none is open.</summary>
    public long TurnStartUs;

    /// <summary>Time of the last course sample in the turn window, Unix microseconds.</summary>
    public long LastCourseUs;

    /// <summary>Heading of the last course sample in the turn window, radians.</summary>
    public double LastCourseHeadingRad;

    /// <summary>Change of the course heading since the window opened, unwrapped, radians.</summary>
    public double CourseTurnRad;

    /// <summary>Yaw rate integrated since the window opened, radians.</summary>
    public double GyroTurnRad;

    /// <summary>Time within the window covered by gyro samples, seconds.</summary>
    public double GyroCoveredS;

    /// <summary>Time of the last inertial sample, Unix microseconds, or <see cref="long.MinValue"/>.</summary>
    public long LastImuUs;

    /// <summary>Yaw rate of the last inertial sample, rad/s.</summary>
    public double LastImuRateRps;

    /// <summary>Time of the fix the open chord starts at, Unix microseconds, or <see cref="long.MinValue"/>.</summary>
    public long ChordStartUs;

    /// <summary>Latitude of the chord's first fix, degrees.</summary>
    public double ChordStartLatDeg;

    /// <summary>Longitude of the chord's first fix, degrees.</summary>
    public double ChordStartLonDeg;

    /// <summary>Reported accuracy of the chord's first fix, metres.</summary>
    public double ChordStartSigmaM;

    /// <summary>Sum of the sines of the course headings seen along the open chord.</summary>
    public double ChordCourseSin;

    /// <summary>Sum of the cosines of the course headings seen along the open chord.</summary>
    public double ChordCourseCos;

    /// <summary>Number of course samples along the open chord.</summary>
    public int ChordCourseSamples;

    /// <summary>The last chord offsets, radians (a ring).</summary>
    public ChordOffsetRing Offsets;

    /// <summary>How many entries of <see cref="Offsets"/> hold values.</summary>
    public int OffsetCount;

    /// <summary>Index in <see cref="Offsets"/> the next offset goes to.</summary>
    public int OffsetNext;

    /// <summary>Nothing observed yet.</summary>
    public static StreamAgreement Empty => new()
    {
        TurnStartUs = long.MinValue,
        LastImuUs = long.MinValue,
        ChordStartUs = long.MinValue,
        LastTurnMismatchRad = double.NaN,
        LastTurnRad = double.NaN,
        CourseOffsetRad = double.NaN,
    };

    /// <summary>Closes the open turn window without judging it (the vehicle is carried: its gyro need not follow the course).</summary>
    public void SuspendTurn() => TurnStartUs = long.MinValue;

    /// <summary>Integrates an inertial sample's yaw rate into the open turn window.</summary>
    public void ObserveImu(in Measurement m)
    {
        if (TurnStartUs != long.MinValue && LastImuUs != long.MinValue)
        {
            long fromUs = Math.Max(LastImuUs, TurnStartUs);
            double dtS = (m.TimeUs - fromUs) / MicrosecondsPerSecond;
            if (dtS > 0 && (m.TimeUs - LastImuUs) / MicrosecondsPerSecond <= MaxImuGapS)
            {
                GyroTurnRad += 0.5 * (m.AsImu().YawRateRps + LastImuRateRps) * dtS;
                GyroCoveredS += dtS;
            }
        }

        LastImuUs = m.TimeUs;
        LastImuRateRps = m.AsImu().YawRateRps;
    }

    /// <summary>
    /// Takes a GNSS velocity sample: its course (when usable) extends the open chord and the turn window; a completed
    /// turn is judged against the gyro.
    /// </summary>
    public void ObserveVelocity(in Measurement m, TrackOptions options, double gyroBiasRps)
    {
        GnssVelocityView velocity = m.AsGnssVelocity();
        if (!(velocity.SpeedMps >= options.CourseMinSpeedMps) || !velocity.HasCourse)
        {
            TurnStartUs = long.MinValue;
            return;
        }

        double heading = TrackProcessor.CourseToHeading(velocity.CourseRad);
        if (ChordStartUs != long.MinValue)
        {
            ChordCourseSin += Math.Sin(heading);
            ChordCourseCos += Math.Cos(heading);
            ChordCourseSamples++;
        }

        if (TurnStartUs == long.MinValue || (m.TimeUs - LastCourseUs) / MicrosecondsPerSecond > MaxCourseGapS)
        {
            OpenTurn(m.TimeUs, heading);
            return;
        }

        CourseTurnRad += Angles.WrapPi(heading - LastCourseHeadingRad);
        LastCourseHeadingRad = heading;
        LastCourseUs = m.TimeUs;
        double windowS = (m.TimeUs - TurnStartUs) / MicrosecondsPerSecond;
        if (Math.Abs(CourseTurnRad) < options.TurnMinRad)
        {
            if (windowS >= MaxTurnWindowS)
            {
                OpenTurn(m.TimeUs, heading);
            }

            return;
        }

        if (!CourseIsolated && GyroCoveredS >= 0.8 * windowS)
        {
            double mismatch = GyroTurnRad - (gyroBiasRps * windowS) - CourseTurnRad;
            LastTurnMismatchRad = mismatch;
            LastTurnRad = CourseTurnRad;
            bool agrees = Math.Abs(mismatch) <= options.TurnToleranceRad + (options.TurnToleranceFraction * Math.Abs(CourseTurnRad));
            TurnAgreements = agrees ? TurnAgreements + 1 : 0;
            TurnDisagreements = agrees ? 0 : TurnDisagreements + 1;
            if (!GyroIsolated && TurnDisagreements >= options.IsolateAfterDisagreements)
            {
                GyroIsolated = true;
                GyroIsolatedSinceUs = m.TimeUs;
            }
            else if (GyroIsolated && TurnAgreements >= options.ReadmitAfterAgreements)
            {
                GyroIsolated = false;
            }
        }

        OpenTurn(m.TimeUs, heading);
    }

    /// <summary>Takes a GNSS fix: it closes the open chord when far enough from its first fix and starts the next one.</summary>
    public void ObserveFix(in Measurement m, TrackOptions options)
    {
        GnssFixView gnssFix = m.AsGnssFix();
        double latDeg = gnssFix.LatitudeDeg, lonDeg = gnssFix.LongitudeDeg, sigmaM = gnssFix.AccuracyM;
        if (ChordStartUs == long.MinValue || (m.TimeUs - ChordStartUs) / MicrosecondsPerSecond > MaxChordS)
        {
            OpenChord(m.TimeUs, latDeg, lonDeg, sigmaM);
            return;
        }

        // Equirectangular offsets: over a chord of tens to hundreds of metres their bearing error is far below a degree.
        double latRad = Angles.DegreesToRadians(0.5 * (latDeg + ChordStartLatDeg));
        double northM = Angles.DegreesToRadians(latDeg - ChordStartLatDeg) * MetresPerRadian;
        double eastM = Angles.WrapPi(Angles.DegreesToRadians(lonDeg - ChordStartLonDeg)) * MetresPerRadian * Math.Cos(latRad);
        double lengthM = Math.Sqrt((eastM * eastM) + (northM * northM));
        double minLengthM = Math.Max(options.ChordMinLengthM, ChordSigmas * Math.Max(sigmaM, ChordStartSigmaM));
        if (lengthM < minLengthM)
        {
            return;
        }

        if (ChordCourseSamples >= MinCourseSamplesPerChord)
        {
            double offset = Angles.WrapPi(Math.Atan2(northM, eastM) - Math.Atan2(ChordCourseSin, ChordCourseCos));
            Offsets[OffsetNext] = offset;
            OffsetNext = (OffsetNext + 1) % ChordOffsetRing.Length;
            OffsetCount = Math.Min(OffsetCount + 1, ChordOffsetRing.Length);
            if (OffsetCount >= MinOffsetsForVerdict)
            {
                CourseOffsetRad = MedianOffset();
                if (!CourseIsolated && Math.Abs(CourseOffsetRad) > options.CourseIsolateOffsetRad
                    && (OffsetCount >= MinOffsetsForMedian || AllLeanBeyond(options.CourseIsolateOffsetRad)))
                {
                    CourseIsolated = true;
                    CourseIsolatedSinceUs = m.TimeUs;
                }
                else if (CourseIsolated && Math.Abs(CourseOffsetRad) < options.CourseReadmitOffsetRad)
                {
                    CourseIsolated = false;
                }
            }
        }

        OpenChord(m.TimeUs, latDeg, lonDeg, sigmaM);
    }

    private void OpenTurn(long timeUs, double headingRad)
    {
        TurnStartUs = timeUs;
        LastCourseUs = timeUs;
        LastCourseHeadingRad = headingRad;
        CourseTurnRad = 0;
        GyroTurnRad = 0;
        GyroCoveredS = 0;
    }

    private void OpenChord(long timeUs, double latDeg, double lonDeg, double sigmaM)
    {
        ChordStartUs = timeUs;
        ChordStartLatDeg = latDeg;
        ChordStartLonDeg = lonDeg;
        ChordStartSigmaM = sigmaM;
        ChordCourseSin = 0;
        ChordCourseCos = 0;
        ChordCourseSamples = 0;
    }

    /// <summary>Whether every held offset lies beyond <paramref name="thresholdRad"/> on the same side.</summary>
    private readonly bool AllLeanBeyond(double thresholdRad)
    {
        int above = 0, below = 0;
        for (int i = 0; i < OffsetCount; i++)
        {
            above += Offsets[i] > thresholdRad ? 1 : 0;
            below += Offsets[i] < -thresholdRad ? 1 : 0;
        }

        return above == OffsetCount || below == OffsetCount;
    }

    /// <summary>Median of the held offsets (offsets near ±π are not expected: a course that far off is isolated long before).</summary>
    private readonly double MedianOffset()
    {
        Span<double> sorted = stackalloc double[ChordOffsetRing.Length];
        for (int i = 0; i < OffsetCount; i++)
        {
            sorted[i] = Offsets[i];
        }

        sorted = sorted[..OffsetCount];
        sorted.Sort();
        int mid = OffsetCount / 2;
        return OffsetCount % 2 == 1 ? sorted[mid] : 0.5 * (sorted[mid - 1] + sorted[mid]);
    }
}
