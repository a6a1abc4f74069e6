// The grain that runs one vehicle's track.
using FusionService.Alerts;
using FusionService.Database;
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Operations;
using FusionService.Storage.Checkpoints;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using Microsoft.Extensions.Options;
using CoreOutcome = FusionService.Estimation.Tracking.MeasurementOutcome;
using StoredOutcome = FusionService.Storage.Measurements.MeasurementOutcome;

namespace FusionService.Tracking;

/// <summary>
/// Runs a <see cref="VehicleTrack"/> for one vehicle. Activation restores the newest stored checkpoint and
/// re-processes the stored measurements after it in canonical order (skipping those stored as too late), which
/// gives the state an uninterrupted track would have. Each batch emits fused states (at every GNSS position epoch
/// and at least every <see cref="TrackGrainOptions.FusedStateIntervalS"/> of data time) and outcome updates to the
/// <see cref="TrackWriteQueue"/>; the base checkpoint is stored periodically and at deactivation, each time only after
/// the queue has written every verdict and fused state queued before it.
/// </summary>
internal sealed class VehicleTrackGrain(
    TrackProcessor processor,
    FusionDatabase database,
    TrackWriteQueue writes,
    TrackStoreGate gate,
    ServiceMetrics metrics,
    IOptions<TrackGrainOptions> options,
    IOptions<DatabaseOptions> databaseOptions,
    TimeProvider time,
    AlertPublisher alerts,
    IClusterMembershipService membership,
    ILogger<VehicleTrackGrain> logger) : Grain, IVehicleTrackGrain, ITrackObserver
{
    private readonly List<MeasurementOutcomeUpdate> _outcomes = [];
    private readonly List<FusedStateRow> _states = [];
    private readonly long?[] _lastBySensor = new long?[4];
    private readonly long _fusedIntervalUs = (long)Math.Round(options.Value.FusedStateIntervalS * 1e6);
    private VehicleTrack _track = new(processor);
    private Guid _fleetId;
    private string _vehicleId = string.Empty;
    private long _lastEmitUs = long.MinValue;
    private long _lastPersistedUs = long.MinValue;
    private readonly long _historySpacingUs = (long)Math.Round(options.Value.HistoryCheckpointSpacingMin * 6e7);

    // The newest stored checkpoint kept as history (see TrackGrainOptions.HistoryCheckpointSpacingMin).
    private long _lastHistoryUs = long.MinValue;
    private DateTimeOffset _lastPersistAt;
    private VehicleAlertMonitor? _monitor;
    private bool _stale;

    // The write-queue ticket of this grain's newest rows, and a base checkpoint taken when one was due, kept until the
    // verdicts and fused states it covers are written (a checkpoint stored before them would, after a crash, make the
    // restore skip measurements whose verdicts were lost, leaving them pending for good).
    private long _lastTicket;
    private (TrackState State, Measurement Last, long Ticket)? _candidate;

    // The commits the restore's read saw (any process's): a delivery of one of them is already in the track.
    private CommitSnapshot? _restored;

    // Processes of the cluster declared dead when the track last looked at the store (see CatchUpAfterDeathsAsync).
    private int _deadSeen;

    public override async Task OnActivateAsync(CancellationToken cancellationToken)
    {
        (_fleetId, _vehicleId) = GrainKeys.Parse(this.GetPrimaryKeyString());
        _deadSeen = DeadProcesses();
        _monitor = alerts.CreateMonitor(_fleetId, _vehicleId);
        var checkpoint = await gate.RunAsync(
            () => new FilterCheckpointRepository(database.DataSource).NewestCheckpointBeforeAsync(_fleetId, _vehicleId, long.MaxValue, cancellationToken),
            cancellationToken);
        long nowUs = (time.GetUtcNow().UtcTicks - DateTime.UnixEpoch.Ticks) / 10;
        long fromUs = nowUs - ((databaseOptions.Value.DaysBack + 1) * 86_400_000_000L);
        long fromFloorUs = fromUs;
        Measurement? floor = null;
        if (checkpoint is { } row && row.PayloadVersion == TrackStateCodec.Version)
        {
            var (state, last) = TrackStateCodec.Decode(row.Payload.Span);
            _track = new VehicleTrack(processor, state, last);
            floor = last;
            fromUs = last.TimeUs;
            _lastPersistedUs = last.TimeUs;
            _lastHistoryUs = last.TimeUs;
        }

        var (stored, snapshot) = await gate.RunAsync(
            () => new MeasurementRepository(database.DataSource).ReadWithSnapshotAsync(_fleetId, _vehicleId, fromUs, nowUs + (7 * 86_400_000_000L), cancellationToken),
            cancellationToken);
        _restored = snapshot;
        int replayed = 0;
        foreach (var s in stored)
        {
            if (s.Outcome == StoredOutcome.TooLate)
            {
                continue;
            }

            var m = Measurement.FromStored(s.TimeUs, ((ulong)(byte)s.Kind << 56) | (ulong)s.MessageKey, s.V0, s.V1 ?? double.NaN, (float)(s.V2 ?? 0));
            if (floor is { } f && VehicleTrack.CompareKey(m, f) <= 0)
            {
                continue;
            }

            _track.Process(m, this);
            replayed++;
        }

        if (floor is { } restoredFloor && options.Value.PendingLookBackMin > 0)
        {
            // Stored at or before the checkpoint but never judged (a kill between a commit and its verdicts): the track
            // cannot go back behind its checkpoint, so they are too late; judged now, they are pending no longer.
            long lookBackUs = (long)Math.Round(options.Value.PendingLookBackMin * 6e7);
            var pending = await gate.RunAsync(
                () => new MeasurementRepository(database.DataSource).ReadPendingAsync(
                    _fleetId, _vehicleId, Math.Max(restoredFloor.TimeUs - lookBackUs, fromFloorUs), restoredFloor.TimeUs + 1, cancellationToken),
                cancellationToken);
            foreach (var s in pending)
            {
                var m = Measurement.FromStored(s.TimeUs, ((ulong)(byte)s.Kind << 56) | (ulong)s.MessageKey, s.V0, s.V1 ?? double.NaN, (float)(s.V2 ?? 0));
                if (VehicleTrack.CompareKey(m, restoredFloor) <= 0)
                {
                    _track.Process(m, this);
                }
            }

            if (pending.Count > 0)
            {
                logger.LogInformation("Track {Key} judged {Count} stored measurements left pending before its checkpoint", this.GetPrimaryKeyString(), pending.Count);
            }
        }

        _lastPersistAt = time.GetUtcNow();
        FlushWrites();
        await _monitor.FlushAsync(live: false, time.GetUtcNow());
        logger.LogDebug("Track {Key} restored: checkpoint {HasCheckpoint}, {Replayed} measurements re-processed", this.GetPrimaryKeyString(), floor is not null, replayed);
        await base.OnActivateAsync(cancellationToken);
    }

    public override async Task OnDeactivateAsync(DeactivationReason reason, CancellationToken cancellationToken)
    {
        try
        {
            await PersistCheckpointAsync();
        }
        catch (Exception ex) when (ex is Npgsql.NpgsqlException or InvalidOperationException or TimeoutException)
        {
            logger.LogWarning(ex, "Track {Key} could not store its checkpoint at deactivation", this.GetPrimaryKeyString());
        }

        await base.OnDeactivateAsync(reason, cancellationToken);
    }

    public async Task ProcessAsync(TrackMeasurement[] batch, CommitStamp stamp)
    {
        ArgumentNullException.ThrowIfNull(batch);
        using var span = FusionTelemetry.StartTrackProcess(this.GetPrimaryKeyString(), batch.Length);
        await CatchUpAfterDeathsAsync();
        if (_restored is { } restored && restored.Holds(stamp.TransactionId))
        {
            // Committed before this activation read the store: the restore processed these already, in order.
            return;
        }

        try
        {
            foreach (var item in batch)
            {
                var m = item.ToMeasurement();
                var outcome = _track.Process(m, this);
            }
        }
        catch (FusionService.Estimation.Filtering.FilterDivergenceException ex)
        {
            // The core judges a measurement it fails on unusable and goes on, so this is a last line of defence only. The
            // measurements are stored; the next activation rebuilds the track from the store.
            logger.LogError(ex, "Track {Key} diverged; deactivating it so that it is rebuilt from the store", this.GetPrimaryKeyString());
            _outcomes.Clear();
            _states.Clear();
            DeactivateOnIdle();
            throw;
        }

        FlushWrites();
        await (_monitor?.FlushAsync(live: true, time.GetUtcNow()) ?? Task.CompletedTask);
        if (_candidate is { } ready && writes.WrittenThrough >= ready.Ticket)
        {
            _candidate = null;
            await StoreCheckpointAsync(ready.State, ready.Last);
        }

        if (_candidate is null && !_stale
            && ((time.GetUtcNow() - _lastPersistAt).TotalSeconds >= options.Value.CheckpointIntervalS || HistoryCheckpointDue()))
        {
            // Due: take the base checkpoint now, store it once the rows it covers are written (never waiting here).
            _lastPersistAt = time.GetUtcNow();
            var (state, last) = _track.BaseCheckpoint;
            if (last is { } lastMeasurement && lastMeasurement.TimeUs != _lastPersistedUs)
            {
                _candidate = (state, lastMeasurement, _lastTicket);
            }
        }
    }

    public async Task<VehicleStateSnapshot?> GetStateAsync()
    {
        await CatchUpAfterDeathsAsync();
        return Snapshot();
    }

    /// <summary>
    /// A process that dies between a commit and the delivery of its batch leaves those rows pending, and a track living
    /// elsewhere never hears of them (a track in the dead process is rebuilt from the store anyway). So once more
    /// processes of the cluster have been declared dead than when the track last looked, it reads its vehicle's pending
    /// rows from <see cref="TrackGrainOptions.PendingLookBackMin"/> before its newest data on, under a snapshot, and
    /// processes them (late data inside the window is fused in order; older is judged too late). Deliveries of commits
    /// that snapshot holds are then skipped, as after a restore.
    /// </summary>
    private async Task CatchUpAfterDeathsAsync()
    {
        int dead = DeadProcesses();
        if (dead == _deadSeen)
        {
            return;
        }

        _deadSeen = dead;
        long nowUs = (time.GetUtcNow().UtcTicks - DateTime.UnixEpoch.Ticks) / 10;
        long lookBackUs = (long)Math.Round(Math.Max(options.Value.PendingLookBackMin, 1) * 6e7);
        long fromUs = _track.NewestTimeUs == long.MinValue
            ? nowUs - ((databaseOptions.Value.DaysBack + 1) * 86_400_000_000L)
            : _track.NewestTimeUs - lookBackUs;
        var (pending, snapshot) = await gate.RunAsync(
            () => new MeasurementRepository(database.DataSource).ReadPendingWithSnapshotAsync(_fleetId, _vehicleId, fromUs, nowUs + (7 * 86_400_000_000L)));
        foreach (var s in pending)
        {
            _track.Process(Measurement.FromStored(s.TimeUs, ((ulong)(byte)s.Kind << 56) | (ulong)s.MessageKey, s.V0, s.V1 ?? double.NaN, (float)(s.V2 ?? 0)), this);
        }

        _restored = snapshot;
        if (pending.Count > 0)
        {
            logger.LogInformation("Track {Key} took {Count} stored measurements whose delivery died with another process", this.GetPrimaryKeyString(), pending.Count);
            FlushWrites();
        }
    }

    private int DeadProcesses() => membership.CurrentSnapshot.Members.Values.Count(m => m.Status == Orleans.Runtime.SiloStatus.Dead);

    private VehicleStateSnapshot? Snapshot()
    {
        ref readonly TrackState s = ref _track.Current;
        if (!s.HasPlane || s.Phase != TrackPhase.Running)
        {
            return null;
        }

        var position = TrackProcessor.PositionOf(s);
        var x = new double[StateIndex.Count];
        var p = new double[StateIndex.Count * StateIndex.Count];
        for (int i = 0; i < x.Length; i++)
        {
            x[i] = s.X[i];
        }

        for (int i = 0; i < p.Length; i++)
        {
            p[i] = s.P[i];
        }

        const string phase = "running";
        return new VehicleStateSnapshot(s.TimeUs, phase, position.LatitudeDeg, position.LongitudeDeg, x, p, [.. _lastBySensor], s.Resets);
    }

    public async Task RebuildAsync(long fromUs)
    {
        _stale = true;
        _candidate = null;
        _outcomes.Clear();
        _states.Clear();
        DeactivateOnIdle();
        await gate.RunAsync(async () =>
        {
            await new FilterCheckpointRepository(database.DataSource).DeleteFromAsync(_fleetId, _vehicleId, fromUs);
            return true;
        });
        logger.LogInformation("Track {Key} will be rebuilt from the store (measurements from {FromUs} may have missed it)", this.GetPrimaryKeyString(), fromUs);
    }

    public async Task PersistCheckpointAsync()
    {
        if (_stale)
        {
            return;
        }

        FlushWrites();
        var (state, last) = _track.BaseCheckpoint;
        _lastPersistAt = time.GetUtcNow();
        if (last is not { } lastMeasurement || lastMeasurement.TimeUs == _lastPersistedUs)
        {
            return;
        }

        // Only after the verdicts and fused states the checkpoint covers are stored.
        using var wait = new CancellationTokenSource(TimeSpan.FromSeconds(options.Value.DrainTimeoutS));
        if (!await writes.WaitWrittenAsync(_lastTicket, wait.Token))
        {
            logger.LogInformation("Track {Key} stores no checkpoint: its verdicts are not written yet", this.GetPrimaryKeyString());
            return;
        }

        // A checkpoint taken earlier and still waiting goes first: it may be one kept as history.
        if (_candidate is { } earlier)
        {
            _candidate = null;
            await StoreCheckpointAsync(earlier.State, earlier.Last);
        }

        await StoreCheckpointAsync(state, lastMeasurement);
    }

    private async Task StoreCheckpointAsync(TrackState state, Measurement lastMeasurement)
    {
        if (_stale || lastMeasurement.TimeUs == _lastPersistedUs)
        {
            return;
        }

        var anchor = state.HasPlane ? state.Plane.Anchor : default;
        var checkpoints = new FilterCheckpointRepository(database.DataSource);
        await gate.RunAsync(async () =>
        {
            await checkpoints.UpsertAsync(new FilterCheckpointRow(
                _fleetId,
                _vehicleId,
                lastMeasurement.TimeUs,
                anchor.LatitudeDeg,
                anchor.LongitudeDeg,
                TrackStateCodec.Version,
                TrackStateCodec.Encode(state, lastMeasurement)));
            // The checkpoints between the newest one kept as history and this one are superseded by it.
            await checkpoints.DeleteBetweenAsync(_fleetId, _vehicleId, _historySpacingUs > 0 ? _lastHistoryUs : long.MinValue, lastMeasurement.TimeUs);
            return true;
        });
        _lastPersistedUs = lastMeasurement.TimeUs;
        if (_historySpacingUs > 0 && (_lastHistoryUs == long.MinValue || lastMeasurement.TimeUs - _lastHistoryUs >= _historySpacingUs))
        {
            _lastHistoryUs = lastMeasurement.TimeUs;
        }
    }

    /// <summary>Whether the track's base checkpoint has moved a history spacing past the newest one kept.</summary>
    private bool HistoryCheckpointDue() =>
        _historySpacingUs > 0 && _track.BaseCheckpointLast is { } last
        && (_lastHistoryUs == long.MinValue || last.TimeUs - _lastHistoryUs >= _historySpacingUs);

    void ITrackObserver.OnOutcome(in Measurement m, in CoreOutcome outcome, in TrackState posterior, bool isReplay)
    {
        _monitor?.Observe(m, outcome, posterior, isReplay);
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

        var key = new MeasurementKey(_fleetId, _vehicleId, (short)m.Kind, m.TimeUs, (long)m.MessageKey);
        _outcomes.Add(new MeasurementOutcomeUpdate(
            key,
            ToStored(outcome.Kind),
            double.IsFinite(outcome.Nis) && outcome.Nis >= 0 ? outcome.Nis : null,
            outcome.Kind == OutcomeKind.TrackReset)
        {
            Whitened0 = StoredWhitened(outcome.Whitened0),
            Whitened1 = StoredWhitened(outcome.Whitened1),
        });

        if (!posterior.HasPlane || posterior.Phase != TrackPhase.Running)
        {
            return;
        }

        long t = posterior.TimeUs;
        if (m.Kind == SensorKind.GnssPosition || t < _lastEmitUs || _lastEmitUs == long.MinValue || t - _lastEmitUs >= _fusedIntervalUs)
        {
            _states.Add(ToFusedRow(posterior));
            _lastEmitUs = t;
        }
    }

    /// <summary>A whitened innovation component as stored (<c>real</c>), null when there is none or it does not fit.</summary>
    private static float? StoredWhitened(double w) => double.IsFinite(w) && Math.Abs(w) < float.MaxValue ? (float)w : null;

    private FusedStateRow ToFusedRow(in TrackState s)
    {
        var position = TrackProcessor.PositionOf(s);
        var packed = new double[FusedStateRow.PackedCovarianceLength];
        int k = 0;
        // The vehicle's own components only; the GNSS error states describe the receiver, not the van.
        for (int i = 0; i < StateIndex.VehicleCount; i++)
        {
            for (int j = i; j < StateIndex.VehicleCount; j++)
            {
                packed[k++] = s.P[(i * StateIndex.Count) + j];
            }
        }

        var ellipse = ErrorEllipse.FromCovariance(s.P[0], s.P[(1 * StateIndex.Count) + 1], s.P[1]);
        return new FusedStateRow(
            _fleetId,
            _vehicleId,
            s.TimeUs,
            position.LatitudeDeg,
            position.LongitudeDeg,
            s.X[StateIndex.HeadingRad],
            s.X[StateIndex.SpeedMps],
            s.X[StateIndex.YawRateRps],
            s.X[StateIndex.AccelMps2],
            s.X[StateIndex.GyroBiasRps],
            s.X[StateIndex.WheelScale],
            packed,
            ellipse.SemiMajorM,
            ellipse.SemiMinorM,
            ellipse.OrientationRad);
    }

    private static StoredOutcome ToStored(OutcomeKind kind) => kind switch
    {
        OutcomeKind.Accepted or OutcomeKind.TrackReset => StoredOutcome.Accepted,
        OutcomeKind.Gated => StoredOutcome.Gated,
        OutcomeKind.TooLate => StoredOutcome.TooLate,
        OutcomeKind.Initialising => StoredOutcome.Initialising,
        OutcomeKind.BeforeStart => StoredOutcome.BeforeStart,
        OutcomeKind.Unusable => StoredOutcome.Unusable,
        _ => StoredOutcome.Unused,
    };

    private void FlushWrites()
    {
        if (_outcomes.Count == 0 && _states.Count == 0)
        {
            return;
        }

        _lastTicket = writes.Enqueue([.. _outcomes], [.. _states]);
        _outcomes.Clear();
        _states.Clear();
    }
}
