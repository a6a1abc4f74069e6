// Collects what one vehicle's track decided, for the write queue, the alerts and the state snapshot.
using FusionService.Alerts;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using FusionService.Operations;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using FusionService.Storage.Tracks;

namespace FusionService.Tracking;

/// <summary>
/// The observer a vehicle track grain hands its track: every outcome goes to the vehicle's alerts
/// (<see cref="VehicleAlertMonitor"/>) and the service's counters (<see cref="ServiceMetrics.CountOutcome"/>) and, unless a duplicate or conflict, becomes a verdict row and updates the newest
/// time per sensor; running posteriors chosen by <see cref="FusedStateSampler"/> become fused-state rows. The rows are
/// buffered until <see cref="Flush"/> hands them to the <see cref="TrackWriteQueue"/>. Not thread-safe (one grain).
/// </summary>
internal sealed class TrackOutcomeRecorder(
    Guid fleetId, string vehicleId, TrackWriteQueue writes, VehicleAlertMonitor alerts, FusedStateSampler sampler, ServiceMetrics metrics)
    : ITrackObserver
{
    private readonly List<MeasurementOutcomeUpdate> _outcomes = [];
    private readonly List<FusedStateRow> _states = [];
    private readonly long?[] _lastBySensor = new long?[4];

    /// <summary>The vehicle's alerts, fed by every outcome.</summary>
    public VehicleAlertMonitor Alerts { get; } = alerts;

    /// <summary>The write-queue ticket of the newest rows flushed (0 before the first).</summary>
    public long LastTicket { get; private set; }

    /// <summary>A copy of the time of the newest processed measurement per sensor kind code (0..3), or null.</summary>
    public long?[] LastTimeUsBySensor() => [.. _lastBySensor];

    /// <summary>Hands the buffered rows to the write queue, if any.</summary>
    public void Flush()
    {
        if (_outcomes.Count == 0 && _states.Count == 0)
        {
            return;
        }

        LastTicket = writes.Enqueue([.. _outcomes], [.. _states]);
        _outcomes.Clear();
        _states.Clear();
    }

    /// <summary>
    /// Completes with true once the write queue has written every row flushed so far, false after
    /// <paramref name="timeout"/> (the store refuses writes).
    /// </summary>
    public async Task<bool> WaitWrittenAsync(TimeSpan timeout)
    {
        using var wait = new CancellationTokenSource(timeout);
        return await writes.WaitWrittenAsync(LastTicket, wait.Token).ConfigureAwait(false);
    }

    /// <summary>Drops the buffered rows (the track is to be rebuilt from the store).</summary>
    public void Discard()
    {
        _outcomes.Clear();
        _states.Clear();
    }

    /// <inheritdoc/>
    public void OnOutcome(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay)
    {
        Alerts.Observe(m, outcome, posterior, isReplay);
        metrics.CountOutcome(m.Kind, outcome, isReplay);
        if (outcome.Kind is OutcomeKind.Duplicate or OutcomeKind.Conflict)
        {
            return;
        }

        int sensor = (int)m.Kind;
        if (sensor < _lastBySensor.Length && (_lastBySensor[sensor] is not { } seen || seen < m.TimeUs))
        {
            _lastBySensor[sensor] = m.TimeUs;
        }

        _outcomes.Add(TrackRows.Verdict(fleetId, vehicleId, m, outcome));
        if (!posterior.HasPlane || posterior.Phase != TrackPhase.Running)
        {
            return;
        }

        if (sampler.Take(m.Kind, posterior.TimeUs))
        {
            _states.Add(TrackRows.FusedState(fleetId, vehicleId, posterior));
        }
    }
}
