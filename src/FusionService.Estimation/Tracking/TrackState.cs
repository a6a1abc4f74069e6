using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// Everything a track's future depends on, as one value: a copy of it is a checkpoint, and processing the same
/// measurements from equal states gives bitwise-equal states.
/// </summary>
public struct TrackState
{
    /// <summary>State vector (see <see cref="Models.StateIndex"/>), in the frame of <see cref="Plane"/>.</summary>
    public StateVector X;

    /// <summary>State covariance.</summary>
    public StateMatrix P;

    /// <summary>Time of the state, Unix microseconds.</summary>
    public long TimeUs;

    /// <summary>Life-cycle phase.</summary>
    public TrackPhase Phase;

    /// <summary>Local tangent plane the position components refer to (valid once a fix has been seen).</summary>
    public LocalTangentPlane Plane;

    /// <summary>Whether <see cref="Plane"/> has been set.</summary>
    public bool HasPlane;

    /// <summary>Whether the stationary constraint is active.</summary>
    public bool Stationary;

    /// <summary>Start of the current run of zero wheel speed, Unix microseconds, or <see cref="long.MinValue"/>.</summary>
    public long WheelZeroSinceUs;

    /// <summary>Time of the last wheel-speed sample, Unix microseconds, or <see cref="long.MinValue"/> when none was seen.</summary>
    public long LastWheelUs;

    /// <summary>Magnitude of the last wheel-speed sample as read (before the wheel scale), m/s.</summary>
    public double LastWheelSpeedMps;

    /// <summary>
    /// Start of the current run of GNSS speeds showing a standstill, for a vehicle without wheel speed (see
    /// <see cref="TrackOptions.NoWheelAfterS"/>), Unix microseconds, or <see cref="long.MinValue"/>.
    /// </summary>
    public long GnssStillSinceUs;

    /// <summary>Whether the calibration states (gyro bias, wheel scale) carry over from before a reset.</summary>
    public bool HasCalibration;

    /// <summary>Fix held while the track waits for a heading, or the last accepted fix while running.</summary>
    public HeldFix Fix;

    /// <summary>GNSS course held while the track waits for a position.</summary>
    public HeldCourse Course;

    /// <summary>Start of the current run of gated GNSS fixes, Unix microseconds.</summary>
    public long RejectedSinceUs;

    /// <summary>Number of consecutive gated GNSS fixes.</summary>
    public int RejectedFixes;

    /// <summary>Consecutive gated GNSS fixes that agree with the position when the error states are ignored (see <see cref="TrackOptions.ErrorRestartAfterFixes"/>).</summary>
    public int StaleErrorEvidence;

    /// <summary>Consecutive gated GNSS velocity measurements.</summary>
    public int VelocityRejections;

    /// <summary>Consecutive gated wheel-speed measurements.</summary>
    public int WheelRejections;

    /// <summary>Consecutive gated inertial samples.</summary>
    public int ImuRejections;

    /// <summary>Time of the last inertial sample fused (or the track's start), Unix microseconds.</summary>
    public long ImuFusedUs;

    /// <summary>
    /// Stationary variance per axis of the correlated GNSS error the error states currently follow, square metres
    /// (the correlated share of the last fix's reported variance; see <see cref="Models.GnssErrorModel"/>).
    /// </summary>
    public double GnssCorrelatedVarianceM2;

    /// <summary>
    /// This receiver's GNSS error share and time constant as fitted from its fixes while the vehicle stood (see
    /// <see cref="Models.GnssErrorVariogram"/>); the profile's values until the first fit. Kept across resets: it is
    /// about the receiver, not the track.
    /// </summary>
    public Models.GnssErrorVariogram GnssErrorFit;

    /// <summary>
    /// Whether the vehicle is being carried (towed, on a ferry, lifted): GNSS reports steady motion while the wheels read
    /// zero. Wheel speed and the standstill constraint are set aside meanwhile (see <see cref="CarriedMotion"/>).
    /// </summary>
    public bool Carried;

    /// <summary>When the current carry began (the first GNSS speed that showed it), Unix microseconds; valid while <see cref="Carried"/>.</summary>
    public long CarriedSinceUs;

    /// <summary>Consecutive GNSS speeds showing motion while the wheels read zero (evidence of a carry not yet taken).</summary>
    public int CarryEvidence;

    /// <summary>Time of the first of <see cref="CarryEvidence"/>, Unix microseconds.</summary>
    public long CarryEvidenceSinceUs;

    /// <summary>Consecutive GNSS speeds below the carry threshold while carried.</summary>
    public int CarrySlow;

    /// <summary>Time of the first of <see cref="CarrySlow"/>, Unix microseconds.</summary>
    public long CarrySlowSinceUs;

    /// <summary>
    /// Which streams agree with the others, and the evidence so far (see <see cref="StreamAgreement"/>); an isolated stream
    /// is not fused until it agrees again. Kept across resets: it is about the sensors, not the track.
    /// </summary>
    public StreamAgreement Agreement;

    /// <summary>The multipath step test's recent fixes and any suspected episode (see <see cref="MultipathStepDetector"/>).</summary>
    public MultipathStepDetector MultipathSteps;

    /// <summary>Number of track resets so far.</summary>
    public int Resets;

    /// <summary>A fresh track.</summary>
    public static TrackState Empty => new() { WheelZeroSinceUs = long.MinValue, TimeUs = long.MinValue, LastWheelUs = long.MinValue, GnssStillSinceUs = long.MinValue, Agreement = StreamAgreement.Empty };

    /// <summary>
    /// A fresh track whose receiver fit starts from (<paramref name="share"/>, <paramref name="timeConstantS"/>) instead of
    /// the profile's pair (<see cref="Models.GnssErrorVariogram.StartingFrom"/>).
    /// </summary>
    public static TrackState StartingFrom(double share, double timeConstantS)
    {
        TrackState s = Empty;
        s.GnssErrorFit = Models.GnssErrorVariogram.StartingFrom(share, timeConstantS);
        return s;
    }
}
