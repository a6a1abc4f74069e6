using FusionService.Estimation.Measurements;

namespace FusionService.Estimation.Tracking;

/// <summary>The result of processing one measurement.</summary>
/// <param name="Kind">What the track did with it.</param>
/// <param name="Nis">Normalised innovation squared νᵀ S⁻¹ ν, or NaN when no innovation was formed.</param>
/// <param name="Dimension">Dimension of the innovation (the chi-square degrees of freedom), 0 when none.</param>
/// <param name="GateThreshold">The NIS threshold it was compared with, or NaN.</param>
/// <param name="Stationary">Whether the stationary constraint was applied at this measurement.</param>
/// <param name="PositionShiftM">How far this update moved the position estimate, metres (0 when not fused).</param>
public readonly record struct MeasurementOutcome(
    OutcomeKind Kind, double Nis, int Dimension, double GateThreshold, bool Stationary, double PositionShiftM)
{
    /// <summary>
    /// True when the measurement was fused after a run of rejections by raising the variance of the state it observes
    /// (see <see cref="TrackOptions.RecoverAfterRejections"/>); <see cref="Nis"/> is then the value before the raise.
    /// </summary>
    public bool Recovered { get; init; }

    /// <summary>
    /// First component of the innovation ν = z - h(x̂⁻) formed against the predicted state, in the measurement's units:
    /// GNSS position east offset, metres; GNSS velocity speed, m/s; wheel speed, m/s; IMU yaw rate, rad/s.
    /// NaN when <see cref="Dimension"/> is 0.
    /// </summary>
    public double Innovation0 { get; init; } = double.NaN;

    /// <summary>
    /// Second component of the innovation when <see cref="Dimension"/> is 2: GNSS position north offset, metres; GNSS
    /// velocity heading, radians (counter-clockwise, wrapped to (-π, π]); IMU longitudinal acceleration, m/s². NaN otherwise.
    /// </summary>
    public double Innovation1 { get; init; } = double.NaN;

    /// <summary>
    /// First component of the whitened innovation w = L⁻¹ ν, where S = H P Hᵀ + R = L Lᵀ (lower Cholesky factor):
    /// dimensionless, standard normal and white over time for a consistent filter, so its sample autocorrelation tests the
    /// filter's whiteness (Mehra 1970). For GNSS position the first component is the east offset over its standard
    /// deviation. NaN when <see cref="Dimension"/> is 0.
    /// </summary>
    public double Whitened0 { get; init; } = double.NaN;

    /// <summary>Second component of the whitened innovation (see <see cref="Whitened0"/>) when <see cref="Dimension"/> is 2; NaN otherwise.</summary>
    public double Whitened1 { get; init; } = double.NaN;

    /// <summary>
    /// True when the track takes the vehicle to be carried after this measurement (towed, on a ferry, lifted: GNSS moves
    /// while the wheels read zero); wheel samples are then <see cref="OutcomeKind.Unused"/>.
    /// </summary>
    public bool Carried { get; init; }

    /// <summary>
    /// True when all or part of the measurement was set aside because its stream is isolated (it kept disagreeing with
    /// independent streams; see <see cref="StreamAgreement"/>): an inertial sample is then <see cref="OutcomeKind.Unused"/>,
    /// a GNSS velocity is fused as speed only (dimension 1).
    /// </summary>
    public bool Isolated { get; init; }

    /// <summary>
    /// True when this GNSS fix, gated against the GNSS error states' estimate, was the one that showed them stale (a
    /// multipath bias they had absorbed is gone): they started again and the fix was fused against that.
    /// </summary>
    public bool ErrorRestarted { get; init; }

    /// <summary>
    /// True when this GNSS fix was set aside (outcome <see cref="OutcomeKind.Gated"/>, whatever its NIS) because it belongs
    /// to a suspected multipath episode: the fixes stepped away from the track together while the motion sensors saw no
    /// such jump (see <see cref="MultipathStepDetector"/>).
    /// </summary>
    public bool MultipathSuspected { get; init; }

    /// <summary>An outcome without an innovation.</summary>
    public static MeasurementOutcome Of(OutcomeKind kind) => new(kind, double.NaN, 0, double.NaN, false, 0);

    /// <summary>
    /// For <see cref="OutcomeKind.Unusable"/>: what the filter failed on (the message of the numeric failure), null
    /// otherwise.
    /// </summary>
    public string? Failure { get; init; }

    /// <summary>The outcome of a measurement the filter failed on numerically (<see cref="OutcomeKind.Unusable"/>).</summary>
    public static MeasurementOutcome UnusableBecause(string failure) => Of(OutcomeKind.Unusable) with { Failure = failure };

    /// <summary>
    /// This outcome carrying <paramref name="innovation"/> and its whitened form <paramref name="whitened"/> (one or two
    /// components each; see <see cref="Innovation0"/> and <see cref="Whitened0"/>).
    /// </summary>
    public MeasurementOutcome WithInnovation(ReadOnlySpan<double> innovation, ReadOnlySpan<double> whitened = default) => this with
    {
        Innovation0 = innovation.Length > 0 ? innovation[0] : double.NaN,
        Innovation1 = innovation.Length > 1 ? innovation[1] : double.NaN,
        Whitened0 = whitened.Length > 0 ? whitened[0] : double.NaN,
        Whitened1 = whitened.Length > 1 ? whitened[1] : double.NaN,
    };

    /// <summary>Human-readable reason, for logs and the audit trail.</summary>
    public string Describe(SensorKind sensor) => Kind switch
    {
        OutcomeKind.Accepted when Isolated => FormattableString.Invariant($"{sensor} fused as speed only, NIS {Nis:F2} (gate {GateThreshold:F2}): its course is isolated, it disagrees with the path of the fixes"),
        OutcomeKind.Gated when Isolated => FormattableString.Invariant($"{sensor} speed rejected by the gate: NIS {Nis:F2} exceeds {GateThreshold:F2}; its course is isolated, it disagrees with the path of the fixes"),
        OutcomeKind.Accepted when ErrorRestarted => FormattableString.Invariant($"{sensor} fused, NIS {Nis:F2}, after the GNSS error estimate was dropped: the fixes no longer show the bias it held (a multipath episode ended)"),
        OutcomeKind.Accepted when Recovered => FormattableString.Invariant($"{sensor} fused after repeated rejection (NIS {Nis:F2} above {GateThreshold:F2}): the motion changed faster than modelled, its uncertainty was raised"),
        OutcomeKind.Accepted => FormattableString.Invariant($"{sensor} fused, NIS {Nis:F2} (dimension {Dimension}, gate {GateThreshold:F2})"),
        OutcomeKind.Gated when MultipathSuspected => FormattableString.Invariant($"{sensor} set aside (NIS {Nis:F2}): the fixes stepped away from the track together while the wheels, gyro and Doppler saw no such jump (a multipath episode suspected)"),
        OutcomeKind.Gated => FormattableString.Invariant($"{sensor} rejected by the gate: NIS {Nis:F2} exceeds {GateThreshold:F2} for dimension {Dimension}"),
        OutcomeKind.TooLate => $"{sensor} older than the lag window; kept for smoothing only",
        OutcomeKind.Duplicate => $"{sensor} exact duplicate; ignored",
        OutcomeKind.Conflict => $"{sensor} has the time, kind and key of another message but different values; ignored",
        OutcomeKind.Initialising => $"{sensor} used to start the track",
        OutcomeKind.BeforeStart => $"{sensor} arrived before the first position fix; not fused",
        OutcomeKind.TrackReset => $"{sensor} re-initialised the track position after sustained rejection",
        OutcomeKind.Unused when Carried => $"{sensor} set aside: GNSS shows the vehicle moving while its wheels are still (carried)",
        OutcomeKind.Unused when Isolated => $"{sensor} set aside: the gyro is isolated, its turns disagree with the GNSS course",
        OutcomeKind.Unused => $"{sensor} carried nothing usable",
        OutcomeKind.Unusable => $"{sensor} skipped: the filter failed numerically on it ({Failure})",
        _ => Kind.ToString(),
    };
}
