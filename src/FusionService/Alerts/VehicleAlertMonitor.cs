// The per-grain hook: alert rules and live positions of one vehicle.
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Live;
using FusionService.Storage.Alerts;
using FusionService.Vehicles;

namespace FusionService.Alerts;

/// <summary>
/// Owned by one vehicle track grain: feeds every outcome to an <see cref="AlertEvaluator"/> and remembers the newest fused
/// position at a GNSS epoch; <see cref="FlushAsync"/> (after each batch) stores the alert changes and publishes the
/// position. Observations that could not be stored are kept and retried at the next flush.
/// </summary>
public sealed class VehicleAlertMonitor
{
    private const double RadToDeg = 180.0 / Math.PI;
    private readonly AlertPublisher _publisher;
    private readonly Guid _fleetId;
    private readonly string _vehicleId;
    private readonly AlertEvaluator _evaluator = new(AlertRuleSettings.Default);
    private readonly List<AlertObservation> _unsaved = [];
    private PositionUpdate? _position;

    internal VehicleAlertMonitor(AlertPublisher publisher, Guid fleetId, string vehicleId)
    {
        _publisher = publisher;
        _fleetId = fleetId;
        _vehicleId = vehicleId;
    }

    /// <summary>Feeds one outcome (call from <see cref="ITrackObserver.OnOutcome"/>).</summary>
    public void Observe(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay)
    {
        _evaluator.Observe(m, outcome, posterior, isReplay);
        if (!isReplay && m.Kind == SensorKind.GnssPosition && posterior.HasPlane && posterior.Phase == TrackPhase.Running
            && outcome.Kind is not (OutcomeKind.Duplicate or OutcomeKind.Conflict)
            && (_position is null || posterior.TimeUs >= UnixMicroseconds.FromDateTimeOffset(_position.Time)))
        {
            var position = TrackProcessor.PositionOf(posterior);
            var ellipse = ErrorEllipse.FromCovariance(posterior.P[0], posterior.P[(1 * StateIndex.Count) + 1], posterior.P[1]);
            _position = new PositionUpdate(
                _vehicleId,
                UnixMicroseconds.ToDateTimeOffset(posterior.TimeUs),
                position.LatitudeDeg,
                position.LongitudeDeg,
                TrackProcessor.HeadingToCourse(posterior.X[StateIndex.HeadingRad]) * RadToDeg,
                posterior.X[StateIndex.SpeedMps],
                new ErrorEllipseResponse(ellipse.SemiMajorM, ellipse.SemiMinorM, ellipse.OrientationRad * RadToDeg));
        }
    }

    /// <summary>
    /// Stores the alert changes since the last flush and, when <paramref name="live"/> (a batch of new data, not the
    /// re-processing at activation), records the receipt and publishes the newest position.
    /// </summary>
    public async Task FlushAsync(bool live, DateTimeOffset now)
    {
        _evaluator.Settings = await _publisher.Rules.GetAsync(_fleetId).ConfigureAwait(false);
        _unsaved.AddRange(_evaluator.TakeChanges());
        if (_unsaved.Count > 0 && await _publisher.ApplyAsync(_fleetId, _vehicleId, [.. _unsaved]).ConfigureAwait(false))
        {
            _unsaved.Clear();
        }

        if (live)
        {
            _publisher.Activity.Note(_fleetId, _vehicleId, now);
            if (_position is { } p)
            {
                _publisher.Hub.PublishPosition(_fleetId, p);
            }
        }

        _position = null;
    }
}
