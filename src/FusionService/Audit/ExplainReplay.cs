// Re-processes a vehicle's stored measurements around an instant and records what each did to the estimate.
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Audit;
using FusionService.Storage.Checkpoints;
using FusionService.Storage.Measurements;
using FusionService.Storage.Vehicles;
using FusionService.Vehicles;

using FusionService.Http;

namespace FusionService.Audit;

/// <summary>
/// Builds an <see cref="ExplainResponse"/> by replaying, like a track grain restoring itself, from the newest stored
/// checkpoint before the window (or, without one, from the first stored measurement at most
/// <see cref="AuditOptions.MaxReplayHours"/> before it) through the window in canonical order, skipping what was
/// stored as too late. Because the live track's late-data re-processing is exact, the replay reproduces its decisions.
/// Each outcome carries the innovation, NIS, gate and position shift the core computed.
/// </summary>
public sealed class ExplainReplay : ITrackObserver
{
    private const double RadToDeg = 180.0 / Math.PI;

    private const string Caution =
        "Re-computed from the stored measurements: positions are estimates with the stated uncertainty, not for "
        + "safety-critical navigation; the vehicle's location is the driver's personal data.";

    private readonly List<ExplainedMeasurement> _entries = [];
    private readonly long _windowFromUs;
    private readonly long _windowToUs;
    private readonly long _timeUs;
    private TrackState _state;
    private bool _hasState;

    private ExplainReplay(long timeUs, long windowFromUs, long windowToUs)
    {
        _timeUs = timeUs;
        _windowFromUs = windowFromUs;
        _windowToUs = windowToUs;
    }

    /// <summary>Explains the estimate of <paramref name="vehicle"/> at <paramref name="timeUs"/> with a window of <paramref name="windowS"/> seconds centred on it.</summary>
    public static async Task<ExplainResponse> BuildAsync(
        AuditRepository audit,
        FilterCheckpointRepository checkpoints,
        ReceiverFitRepository receiverFits,
        TrackProcessor processor,
        AuditOptions options,
        Guid fleetId,
        string vehicle,
        long timeUs,
        double windowS,
        CancellationToken cancellationToken)
    {
        long halfUs = (long)Math.Round(windowS * 0.5e6);
        var replay = new ExplainReplay(timeUs, timeUs - halfUs, timeUs + halfUs);
        long lowerUs = replay._windowFromUs - (long)Math.Round(options.MaxReplayHours * 3600e6);

        VehicleTrack track;
        Measurement? floor = null;
        long readFromUs = lowerUs;
        bool fromCheckpoint = false;
        bool exact;
        var checkpoint = await checkpoints.NewestCheckpointBeforeAsync(fleetId, vehicle, replay._windowFromUs, cancellationToken).ConfigureAwait(false);
        if (checkpoint is { } row && TrackStateCodec.CanDecode(row.PayloadVersion) && row.TimeUs >= lowerUs)
        {
            var (state, last) = TrackStateCodec.Decode(row.Payload.Span);
            track = new VehicleTrack(processor, state, last);
            floor = last;
            readFromUs = last.TimeUs;
            fromCheckpoint = true;
            exact = true;
        }
        else
        {
            // From the first measurement read: where the vehicle's track started (its receiver fit's starting pair).
            track = new VehicleTrack(processor, await receiverFits.StartStateAsync(fleetId, vehicle, cancellationToken).ConfigureAwait(false));
            exact = !await audit.AnyMeasurementBeforeAsync(fleetId, vehicle, lowerUs, cancellationToken).ConfigureAwait(false);
        }

        long replayed = 0;
        long? firstUs = fromCheckpoint ? readFromUs : null;
        await foreach (var s in audit.MeasurementsAsync(fleetId, vehicle, readFromUs, replay._windowToUs + 1, cancellationToken).ConfigureAwait(false))
        {
            var m = MeasurementRows.ToMeasurement(s);
            if (floor is { } f && VehicleTrack.CompareKey(m, f) <= 0)
            {
                continue;
            }

            if (s.Outcome == OutcomeKind.TooLate)
            {
                replay.OnOutcome(m, MeasurementOutcome.Of(OutcomeKind.TooLate), default, false);
                continue;
            }

            firstUs ??= s.TimeUs;
            track.Process(m, replay);
            replayed++;
        }

        return new ExplainResponse(
            vehicle,
            QueryTime.ToTime(timeUs),
            replay._hasState ? ToState(replay._state) : null,
            replay._entries,
            new ExplainReplayResponse(firstUs is { } t ? QueryTime.ToTime(t) : null, fromCheckpoint, replayed, exact),
            Caution);
    }

    /// <inheritdoc />
    public void OnOutcome(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay)
    {
        if (outcome.Kind != OutcomeKind.TooLate && posterior.Phase == TrackPhase.Running && posterior.HasPlane && posterior.TimeUs <= _timeUs)
        {
            _state = posterior;
            _hasState = true;
        }

        if (m.TimeUs < _windowFromUs || m.TimeUs > _windowToUs)
        {
            return;
        }

        bool hasInnovation = outcome.Dimension > 0 && double.IsFinite(outcome.Nis);
        _entries.Add(new ExplainedMeasurement(
            QueryTime.ToTime(m.TimeUs),
            SensorNames.Of(m.Kind),
            ValuesOf(m),
            hasInnovation ? Residual(m.Kind, outcome) : null,
            hasInnovation ? ResidualUnits(m.Kind, outcome.Dimension) : null,
            hasInnovation ? outcome.Nis : null,
            hasInnovation ? outcome.Dimension : null,
            hasInnovation ? outcome.GateThreshold : null,
            DecisionNames.Of(outcome.Kind),
            outcome.Kind is OutcomeKind.Accepted or OutcomeKind.Gated or OutcomeKind.TrackReset ? outcome.PositionShiftM : null));
    }

    private static ExplainStateResponse ToState(in TrackState s)
    {
        var position = TrackProcessor.PositionOf(s);
        const int N = StateIndex.Count;
        var ellipse = ErrorEllipse.FromCovariance(s.P[0], s.P[N + 1], s.P[1]);
        return new ExplainStateResponse(
            QueryTime.ToTime(s.TimeUs),
            position.LatitudeDeg,
            position.LongitudeDeg,
            TrackProcessor.HeadingToCourse(s.X[StateIndex.HeadingRad]) * RadToDeg,
            s.X[StateIndex.SpeedMps],
            new ErrorEllipseResponse(ellipse.SemiMajorM, ellipse.SemiMinorM, ellipse.OrientationRad * RadToDeg));
    }

    private static Dictionary<string, double> ValuesOf(in Measurement m)
    {
        var values = new Dictionary<string, double>(StringComparer.Ordinal);
        switch (m.Kind)
        {
            case SensorKind.GnssPosition:
                GnssFixView fix = m.AsGnssFix();
                values["lat_deg"] = fix.LatitudeDeg;
                values["lon_deg"] = fix.LongitudeDeg;
                values["accuracy_m"] = fix.AccuracyM;
                break;
            case SensorKind.GnssVelocity:
                GnssVelocityView velocity = m.AsGnssVelocity();
                values["speed_mps"] = velocity.SpeedMps;
                if (velocity.HasCourse)
                {
                    values["course_deg"] = velocity.CourseRad * RadToDeg;
                }

                break;
            case SensorKind.WheelSpeed:
                values["speed_mps"] = m.AsWheelSpeed().SpeedMps;
                break;
            default:
                ImuView imu = m.AsImu();
                values["yaw_rate_dps"] = imu.YawRateRps * RadToDeg;
                if (imu.HasAccel)
                {
                    values["accel_mps2"] = imu.AccelMps2;
                }

                break;
        }

        return values;
    }

    /// <summary>The innovation in API units: angles and angular rates in degrees.</summary>
    private static double[] Residual(SensorKind kind, in MeasurementOutcome outcome)
    {
        double first = kind == SensorKind.Imu ? outcome.Innovation0 * RadToDeg : outcome.Innovation0;
        double second = kind == SensorKind.GnssVelocity ? outcome.Innovation1 * RadToDeg : outcome.Innovation1;
        return outcome.Dimension > 1 ? [first, second] : [first];
    }

    private static string[] ResidualUnits(SensorKind kind, int dimension) => (kind, dimension) switch
    {
        (SensorKind.GnssPosition, _) => ["m", "m"],
        (SensorKind.GnssVelocity, 2) => ["m/s", "deg"],
        (SensorKind.GnssVelocity, _) => ["m/s"],
        (SensorKind.WheelSpeed, _) => ["m/s"],
        (_, 2) => ["deg/s", "m/s^2"],
        _ => ["deg/s"],
    };
}
