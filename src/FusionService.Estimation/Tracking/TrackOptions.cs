namespace FusionService.Estimation.Tracking;

/// <summary>Behaviour of one vehicle track. Defaults suit a delivery van with a 1 Hz GNSS and 10 Hz odometer and IMU.</summary>
public sealed record TrackOptions
{
    /// <summary>Probability that a consistent measurement passes the chi-square gate. Default 0.9997.</summary>
    public double GateProbability { get; init; } = 0.9997;

    /// <summary>How far behind the newest measurement a late one is still fused exactly, seconds. Default 60.</summary>
    public double LagWindowS { get; init; } = 60.0;

    /// <summary>
    /// Spacing of the posterior checkpoints a late measurement is replayed from, seconds, behind the newest
    /// <see cref="RecentCheckpoints"/>. Default 5: a track then holds at most the window plus 5 s of measurements and
    /// (window / 5 s) + 2 checkpoints of about 1.9 KB encoded, and the recent ones.
    /// </summary>
    public double CheckpointIntervalS { get; init; } = 5.0;

    /// <summary>
    /// Spacing of the newest <see cref="RecentCheckpoints"/> checkpoints, seconds; older ones are thinned to
    /// <see cref="CheckpointIntervalS"/>. Default 1: a sample a few tenths of a second late (a van's streams uploaded by
    /// concurrent requests, a gateway's batches) replays about half a second instead of half the checkpoint interval.
    /// </summary>
    public double RecentCheckpointIntervalS { get; init; } = 1.0;

    /// <summary>
    /// How many of the newest checkpoints keep <see cref="RecentCheckpointIntervalS"/> spacing. Default 3 (the last two to
    /// three seconds), each about 1.9 KB encoded: samples later than that are rare and replay from the sparser ones.
    /// </summary>
    public int RecentCheckpoints { get; init; } = 3;

    /// <summary>Largest prediction step, seconds; longer gaps are predicted in sub-steps. Default 1.</summary>
    public double MaxPredictionStepS { get; init; } = 1.0;

    /// <summary>GNSS course is used only above this speed over ground, m/s. Default 2.</summary>
    public double CourseMinSpeedMps { get; init; } = 2.0;

    /// <summary>Floor on the course standard deviation, radians. Default 0.02 (about 1 degree).</summary>
    public double CourseSigmaFloorRad { get; init; } = 0.02;

    /// <summary>Wheel speed at or below this magnitude counts as zero, m/s. Default 0.05.</summary>
    public double ZeroSpeedThresholdMps { get; init; } = 0.05;

    /// <summary>Wheel speed must read zero this long before the stationary constraint applies, seconds. Default 2.</summary>
    public double StationaryAfterS { get; init; } = 2.0;

    /// <summary>
    /// A vehicle with no wheel-speed sample for this long is taken to have no wheel speed: its standstill is then judged
    /// from GNSS speed (<see cref="GnssStillSpeedMps"/>), seconds. Default 10.
    /// </summary>
    public double NoWheelAfterS { get; init; } = 10.0;

    /// <summary>
    /// For a vehicle without wheel speed, GNSS speed at or below this (with a speed accuracy no worse) counts as standing
    /// still, m/s. Default 0.3: three times a consumer receiver's 0.1 m/s Doppler noise (common practice).
    /// </summary>
    public double GnssStillSpeedMps { get; init; } = 0.3;

    /// <summary>Standard deviation of the stationary pseudo-measurement of speed, m/s. Default 0.005.</summary>
    public double StationarySpeedSigmaMps { get; init; } = 0.005;

    /// <summary>Standard deviation of the stationary pseudo-measurement of yaw rate, rad/s. Default 0.0005.</summary>
    public double StationaryYawRateSigmaRps { get; init; } = 0.0005;

    /// <summary>
    /// A motion sensor (GNSS velocity, wheel, IMU) rejected this many times in a row is taken to show a real change of
    /// motion: the observed state's variance is raised and the sample fused. Default 3 (0.3 s at 10 Hz).
    /// </summary>
    public int RecoverAfterRejections { get; init; } = 3;

    /// <summary>
    /// GNSS must be rejected continuously this long before a moving track may reset, seconds. Default 45: longer than the
    /// 5-40 s multipath episodes of urban driving (common practice), so an episode biased beyond
    /// <see cref="ResetDistanceM"/> is ridden out on the wheels and gyro instead of moving the track onto it and back
    /// (`./build.sh bench consistency 16 multipath`: 40-80 m biases 87 % inside the 95 % ellipse and 27 resets over 16
    /// drives at 15 s, 96.5 % and none at 45 s).
    /// </summary>
    public double ResetAfterS { get; init; } = 45.0;

    /// <summary>
    /// The same for a track held still by the standstill constraint (wheels at zero), seconds. Default 120: multipath
    /// episodes beside buildings last 5-40 s (common practice), and a van moved with its wheels still shows GNSS speed and
    /// is followed as carried instead; only a van moved while its GNSS was silent needs this relocation.
    /// </summary>
    public double ResetAfterStationaryS { get; init; } = 120.0;

    /// <summary>
    /// A moving track whose GNSS fixes have all been gated this long, but lie closer than <see cref="ResetDistanceM"/>, takes
    /// its position from them again (its position variance raised by the offset, no reset), seconds. Default 60: longer
    /// than the 5-40 s multipath episodes of urban driving (common practice), so an episode's biased fixes stay gated while
    /// a track that started inside one comes back. A standing van waits <see cref="ResetAfterStationaryS"/>.
    /// </summary>
    public double RecoverPositionAfterS { get; init; } = 60.0;

    /// <summary>...and the rejected fix must lie at least this far from the track, metres. Default 75.</summary>
    public double ResetDistanceM { get; init; } = 75.0;

    /// <summary>...and at least this many consecutive GNSS fixes must have been rejected. Default 5.</summary>
    public int ResetMinRejectedFixes { get; init; } = 5;

    /// <summary>Two fixes further apart than this many combined sigmas give the initial heading. Default 4.</summary>
    public double TwoFixHeadingSigmas { get; init; } = 4.0;

    /// <summary>A first fix older than this is replaced by the next one while waiting for a heading, seconds. Default 20.</summary>
    public double TwoFixMaxAgeS { get; init; } = 20.0;

    /// <summary>
    /// Before the track runs, a fix is confirmed by the next one only if the two lie closer than a vehicle could move
    /// between them; without a GNSS course or a standstill to say how it moves, this is the speed it could have, m/s.
    /// Default 45 (about 160 km/h, above a delivery van's top speed).
    /// </summary>
    public double StartMaxSpeedMps { get; init; } = 45.0;

    /// <summary>
    /// ...and with a GNSS course, the acceleration (along or across the course) by which the path may leave the straight
    /// line the course gives, m/s². Default 3 (about 0.3 g, beyond ordinary urban driving; common practice).
    /// </summary>
    public double StartMaxAccelMps2 { get; init; } = 3.0;

    /// <summary>Heading standard deviation above which a moving track re-acquires its heading from two fixes, radians. Default 0.6 (about 35 degrees).</summary>
    public double HeadingReacquireSigmaRad { get; init; } = 0.6;

    /// <summary>The track re-anchors its local plane when it is this far from the anchor, metres (see LocalTangentPlane.MaxRadiusForScaleErrorM). Default 10,000.</summary>
    public double ReanchorRadiusM { get; init; } = 10_000.0;

    /// <summary>
    /// GNSS speed at or above which a vehicle whose wheels read zero is taken to be carried (towed, on a ferry, lifted),
    /// m/s. Default 1.5: Doppler speed is far less affected by multipath than position, and a parked receiver's speed
    /// noise stays well below this (common practice).
    /// </summary>
    public double CarriedMinSpeedMps { get; init; } = 1.5;

    /// <summary>How long GNSS must show that speed while the wheels read zero before the vehicle counts as carried, seconds. Default 5.</summary>
    public double CarriedAfterS { get; init; } = 5.0;

    /// <summary>How long GNSS speed must stay below <see cref="CarriedMinSpeedMps"/> before a carry ends, seconds. Default 3.</summary>
    public double CarriedEndAfterS { get; init; } = 3.0;

    /// <summary>
    /// A change of GNSS course at least this large is a turn on which the gyro is judged (see <see cref="StreamAgreement"/>),
    /// radians. Default 0.6 (about 34 degrees): large against the course noise of two samples (about 0.1 rad at 5 m/s).
    /// </summary>
    public double TurnMinRad { get; init; } = 0.6;

    /// <summary>Fixed part of how far the integrated gyro may differ from the course's turn, radians. Default 0.15.</summary>
    public double TurnToleranceRad { get; init; } = 0.15;

    /// <summary>
    /// Part of the turn the integrated gyro may also differ by (scale error, timing). Default 0.3: a gyro with the wrong
    /// sign differs by twice the turn, one badly scaled by more than 30 % is worth isolating too.
    /// </summary>
    public double TurnToleranceFraction { get; init; } = 0.3;

    /// <summary>Consecutive disagreeing turns that isolate the gyro. Default 1: on clean drives the mismatch stays within 0.11 rad, a third of the tolerance, while a gyro of the wrong sign misses by twice the turn.</summary>
    public int IsolateAfterDisagreements { get; init; } = 1;

    /// <summary>Consecutive agreeing turns that re-admit an isolated gyro. Default 2.</summary>
    public int ReadmitAfterAgreements { get; init; } = 2;

    /// <summary>
    /// Shortest chord between two GNSS fixes whose bearing is compared with the course, metres (at least 8 times the fixes'
    /// reported accuracy as well). Default 40.
    /// </summary>
    public double ChordMinLengthM { get; init; } = 25.0;

    /// <summary>
    /// Median offset of the course from the chords' bearings beyond which the course is isolated, radians. Default 0.3
    /// (about 17 degrees).
    /// </summary>
    public double CourseIsolateOffsetRad { get; init; } = 0.3;

    /// <summary>Median offset below which an isolated course is re-admitted, radians. Default 0.15 (about 9 degrees).</summary>
    public double CourseReadmitOffsetRad { get; init; } = 0.15;

    /// <summary>
    /// Gated GNSS fixes in a row that agree with the position when the GNSS error states are ignored (their stationary
    /// distribution instead, 99 % gate) after which the error states start again: the bias they absorbed during a multipath
    /// episode is gone. Default 3 (3 s at 1 Hz; one outlier never does it).
    /// </summary>
    public int ErrorRestartAfterFixes { get; init; } = 3;

    /// <summary>
    /// Probability that a step between successive GNSS fixes as large as the white noise and the correlated error allow
    /// passes the multipath step test (<see cref="MultipathStepDetector"/>); a larger step begins a suspected multipath
    /// episode, whose fixes are set aside. Default 0.999 (chi-square, two dimensions: NIS 13.8); 0 turns the test off.
    /// </summary>
    public double MultipathStepProbability { get; init; } = 0.999;

    /// <summary>Fixes further apart than this are not compared by the multipath step test, seconds. Default 2.5 (1 Hz fixes with one lost).</summary>
    public double MultipathStepMaxGapS { get; init; } = 2.5;

    /// <summary>
    /// Fixes in a row nearer the level before a suspected multipath episode than the episode's own level that end it
    /// when no step back was seen. Default 2.
    /// </summary>
    public int MultipathLevelFixes { get; init; } = 2;

    /// <summary>
    /// After a suspected multipath episode whose fixes did not hold a steady level (the track was drifting, not the
    /// fixes stepping), after a stream was isolated, and after a GNSS velocity disagreed with the track, no new episode
    /// begins for this long, seconds. Default 30.
    /// </summary>
    public double MultipathSuppressS { get; init; } = 30.0;

    /// <summary>Throws <see cref="ArgumentException"/> naming the first invalid option.</summary>
    public void Validate()
    {
        Require(GateProbability > 0 && GateProbability < 1, nameof(GateProbability), "must lie in (0, 1)");
        Require(MultipathStepProbability >= 0 && MultipathStepProbability < 1, nameof(MultipathStepProbability), "must lie in [0, 1)");
        Require(MultipathStepMaxGapS > 0 && double.IsFinite(MultipathStepMaxGapS), nameof(MultipathStepMaxGapS), "must be finite and positive");
        Require(MultipathLevelFixes >= 1, nameof(MultipathLevelFixes), "must be at least 1");
        Require(MultipathSuppressS >= 0 && double.IsFinite(MultipathSuppressS), nameof(MultipathSuppressS), "must be finite and non-negative");
        Require(LagWindowS >= 0 && double.IsFinite(LagWindowS), nameof(LagWindowS), "must be finite and non-negative");
        Require(CheckpointIntervalS > 0 && double.IsFinite(CheckpointIntervalS), nameof(CheckpointIntervalS), "must be finite and positive");
        Require(
            RecentCheckpointIntervalS > 0 && RecentCheckpointIntervalS <= CheckpointIntervalS,
            nameof(RecentCheckpointIntervalS),
            "must be positive and at most CheckpointIntervalS");
        Require(RecentCheckpoints >= 0, nameof(RecentCheckpoints), "must be non-negative");
        Require(MaxPredictionStepS > 0 && double.IsFinite(MaxPredictionStepS), nameof(MaxPredictionStepS), "must be finite and positive");
        Require(CourseMinSpeedMps >= 0, nameof(CourseMinSpeedMps), "must be non-negative");
        Require(CourseSigmaFloorRad > 0, nameof(CourseSigmaFloorRad), "must be positive");
        Require(ZeroSpeedThresholdMps >= 0, nameof(ZeroSpeedThresholdMps), "must be non-negative");
        Require(StationaryAfterS >= 0, nameof(StationaryAfterS), "must be non-negative");
        Require(NoWheelAfterS > 0 && double.IsFinite(NoWheelAfterS), nameof(NoWheelAfterS), "must be finite and positive");
        Require(GnssStillSpeedMps >= 0 && double.IsFinite(GnssStillSpeedMps), nameof(GnssStillSpeedMps), "must be finite and non-negative");
        Require(StationarySpeedSigmaMps > 0, nameof(StationarySpeedSigmaMps), "must be positive");
        Require(StationaryYawRateSigmaRps > 0, nameof(StationaryYawRateSigmaRps), "must be positive");
        Require(RecoverAfterRejections >= 1, nameof(RecoverAfterRejections), "must be at least 1");
        Require(ResetAfterS >= 0, nameof(ResetAfterS), "must be non-negative");
        Require(ResetDistanceM >= 0, nameof(ResetDistanceM), "must be non-negative");
        Require(ResetAfterStationaryS >= 0 && double.IsFinite(ResetAfterStationaryS), nameof(ResetAfterStationaryS), "must be finite and non-negative");
        Require(ResetMinRejectedFixes >= 1, nameof(ResetMinRejectedFixes), "must be at least 1");
        Require(TwoFixHeadingSigmas > 0, nameof(TwoFixHeadingSigmas), "must be positive");
        Require(TwoFixMaxAgeS > 0, nameof(TwoFixMaxAgeS), "must be positive");
        Require(StartMaxSpeedMps > 0, nameof(StartMaxSpeedMps), "must be positive");
        Require(StartMaxAccelMps2 > 0, nameof(StartMaxAccelMps2), "must be positive");
        Require(HeadingReacquireSigmaRad > 0, nameof(HeadingReacquireSigmaRad), "must be positive");
        Require(ReanchorRadiusM > 0, nameof(ReanchorRadiusM), "must be positive");
        Require(CarriedMinSpeedMps > 0 && double.IsFinite(CarriedMinSpeedMps), nameof(CarriedMinSpeedMps), "must be finite and positive");
        Require(CarriedAfterS >= 0 && double.IsFinite(CarriedAfterS), nameof(CarriedAfterS), "must be finite and non-negative");
        Require(CarriedEndAfterS >= 0 && double.IsFinite(CarriedEndAfterS), nameof(CarriedEndAfterS), "must be finite and non-negative");
        Require(RecoverPositionAfterS >= 0 && double.IsFinite(RecoverPositionAfterS), nameof(RecoverPositionAfterS), "must be finite and non-negative");
        Require(ErrorRestartAfterFixes >= 1, nameof(ErrorRestartAfterFixes), "must be at least 1");
        Require(TurnMinRad > 0 && TurnMinRad < Math.PI, nameof(TurnMinRad), "must lie in (0, π)");
        Require(TurnToleranceRad >= 0 && double.IsFinite(TurnToleranceRad), nameof(TurnToleranceRad), "must be finite and non-negative");
        Require(TurnToleranceFraction >= 0 && double.IsFinite(TurnToleranceFraction), nameof(TurnToleranceFraction), "must be finite and non-negative");
        Require(IsolateAfterDisagreements >= 1, nameof(IsolateAfterDisagreements), "must be at least 1");
        Require(ReadmitAfterAgreements >= 1, nameof(ReadmitAfterAgreements), "must be at least 1");
        Require(ChordMinLengthM > 0 && double.IsFinite(ChordMinLengthM), nameof(ChordMinLengthM), "must be finite and positive");
        Require(CourseIsolateOffsetRad > 0 && CourseIsolateOffsetRad < Math.PI, nameof(CourseIsolateOffsetRad), "must lie in (0, π)");
        Require(CourseReadmitOffsetRad > 0 && CourseReadmitOffsetRad <= CourseIsolateOffsetRad, nameof(CourseReadmitOffsetRad), "must be positive and at most CourseIsolateOffsetRad");
    }

    private static void Require(bool condition, string name, string why)
    {
        if (!condition)
        {
            throw new ArgumentException($"{name} {why}.", name);
        }
    }
}
