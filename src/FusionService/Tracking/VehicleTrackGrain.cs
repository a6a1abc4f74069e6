// The grain that runs one vehicle's track.
using FusionService.Database;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Operations;
using FusionService.Storage.Failures;
using FusionService.Storage.Measurements;
using Microsoft.Extensions.Options;

namespace FusionService.Tracking;

/// <summary>
/// Runs a <see cref="VehicleTrack"/> for one vehicle. Activation restores the newest stored checkpoint and
/// re-processes the stored measurements after it in canonical order (skipping those stored as too late), which
/// gives the state an uninterrupted track would have. Each batch emits fused states (at every GNSS position epoch
/// and at least every <see cref="TrackGrainOptions.FusedStateIntervalS"/> of data time) and outcome updates to the
/// <see cref="TrackWriteQueue"/>; the base checkpoint is stored periodically and at deactivation, each time only after
/// the queue has written every verdict and fused state queued before it. The grain orchestrates: the store calls are
/// <see cref="TrackStore"/>'s, the rows and alerts <see cref="TrackOutcomeRecorder"/>'s, the checkpoints
/// <see cref="TrackCheckpointKeeper"/>'s (both made per vehicle by <see cref="TrackPartsFactory"/>).
/// </summary>
internal sealed class VehicleTrackGrain(
    TrackProcessor processor,
    TrackStore store,
    TrackPartsFactory parts,
    ServiceMetrics metrics,
    IOptions<TrackGrainOptions> options,
    IOptions<DatabaseOptions> databaseOptions,
    TimeProvider time,
    IClusterMembershipService membership,
    ILogger<VehicleTrackGrain> logger) : Grain, IVehicleTrackGrain
{
    private VehicleTrack _track = new(processor);
    private Guid _fleetId;
    private string _vehicleId = string.Empty;

    // Made at activation; null only if activation failed before.
    private TrackOutcomeRecorder? _recorder;
    private TrackCheckpointKeeper? _checkpoints;

    // The commits the restore's read saw (any process's): a delivery of one of them is already in the track.
    private CommitSnapshot? _restored;

    // Processes of the cluster declared dead when the track last looked at the store (see CatchUpAfterDeathsAsync).
    private int _deadSeen;

    public override async Task OnActivateAsync(CancellationToken cancellationToken)
    {
        (_fleetId, _vehicleId) = GrainKeys.Parse(this.GetPrimaryKeyString());
        _deadSeen = DeadProcesses();
        var recorder = _recorder = parts.CreateRecorder(_fleetId, _vehicleId);
        var checkpoints = _checkpoints = parts.CreateCheckpointKeeper(_fleetId, _vehicleId, this.GetPrimaryKeyString());
        var checkpoint = await store.NewestCheckpointAsync(_fleetId, _vehicleId, cancellationToken);
        long nowUs = UnixMicroseconds.Now(time);
        long fromUs = nowUs - ((databaseOptions.Value.DaysBack + 1) * 86_400_000_000L);
        long fromFloorUs = fromUs;
        Measurement? floor = null;
        if (checkpoint is { } row && row.PayloadVersion == TrackStateCodec.Version)
        {
            var (state, last) = TrackStateCodec.Decode(row.Payload.Span);
            _track = new VehicleTrack(processor, state, last);
            floor = last;
            fromUs = last.TimeUs;
            checkpoints.RestoredFrom(last.TimeUs);
        }

        var (stored, snapshot) = await store.ReadWithSnapshotAsync(_fleetId, _vehicleId, fromUs, nowUs + (7 * 86_400_000_000L), cancellationToken);
        _restored = snapshot;
        int replayed = 0;
        foreach (var s in stored)
        {
            if (s.Outcome == OutcomeKind.TooLate)
            {
                continue;
            }

            var m = MeasurementRows.ToMeasurement(s);
            if (floor is { } f && VehicleTrack.CompareKey(m, f) <= 0)
            {
                continue;
            }

            _track.Process(m, recorder);
            replayed++;
        }

        if (floor is { } restoredFloor && options.Value.PendingLookBackMin > 0)
        {
            // Stored at or before the checkpoint but never judged (a kill between a commit and its verdicts): the track
            // cannot go back behind its checkpoint, so they are too late; judged now, they are pending no longer.
            long lookBackUs = (long)Math.Round(options.Value.PendingLookBackMin * 6e7);
            var pending = await store.ReadPendingAsync(
                _fleetId, _vehicleId, Math.Max(restoredFloor.TimeUs - lookBackUs, fromFloorUs), restoredFloor.TimeUs + 1, cancellationToken);
            foreach (var s in pending)
            {
                var m = MeasurementRows.ToMeasurement(s);
                if (VehicleTrack.CompareKey(m, restoredFloor) <= 0)
                {
                    _track.Process(m, recorder);
                }
            }

            if (pending.Count > 0)
            {
                logger.LogInformation("Track {Key} judged {Count} stored measurements left pending before its checkpoint", this.GetPrimaryKeyString(), pending.Count);
            }
        }

        checkpoints.StartInterval();
        recorder.Flush();
        await recorder.Alerts.FlushAsync(live: false, time.GetUtcNow());
        logger.LogDebug("Track {Key} restored: checkpoint {HasCheckpoint}, {Replayed} measurements re-processed", this.GetPrimaryKeyString(), floor is not null, replayed);
        await base.OnActivateAsync(cancellationToken);
    }

    public override async Task OnDeactivateAsync(DeactivationReason reason, CancellationToken cancellationToken)
    {
        try
        {
            await PersistCheckpointAsync();
        }
        catch (Exception ex) when (TransientDatabaseError.Is(ex))
        {
            logger.LogWarning(ex, "Track {Key} could not store its checkpoint at deactivation", this.GetPrimaryKeyString());
        }

        await base.OnDeactivateAsync(reason, cancellationToken);
    }

    public async Task ProcessAsync(TrackMeasurement[] batch, CommitStamp stamp)
    {
        ArgumentNullException.ThrowIfNull(batch);
        var recorder = Parts().Recorder;
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
                var outcome = _track.Process(m, recorder);
                if (outcome.Kind == OutcomeKind.Gated)
                {
                    metrics.CountGated();
                }
            }
        }
        catch (FusionService.Estimation.Filtering.FilterDivergenceException ex)
        {
            // The core judges a measurement it fails on unusable and goes on, so this is a last line of defence only. The
            // measurements are stored; the next activation rebuilds the track from the store.
            logger.LogError(ex, "Track {Key} diverged; deactivating it so that it is rebuilt from the store", this.GetPrimaryKeyString());
            recorder.Discard();
            DeactivateOnIdle();
            throw;
        }

        recorder.Flush();
        await recorder.Alerts.FlushAsync(live: true, time.GetUtcNow());
        await Parts().Checkpoints.AfterBatchAsync(_track, recorder.LastTicket);
    }

    public async Task<VehicleStateSnapshot?> GetStateAsync()
    {
        await CatchUpAfterDeathsAsync();
        return VehicleStateSnapshot.Of(_track.Current, Parts().Recorder.LastTimeUsBySensor());
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
        var recorder = Parts().Recorder;
        long nowUs = UnixMicroseconds.Now(time);
        long lookBackUs = (long)Math.Round(Math.Max(options.Value.PendingLookBackMin, 1) * 6e7);
        long fromUs = _track.NewestTimeUs == long.MinValue
            ? nowUs - ((databaseOptions.Value.DaysBack + 1) * 86_400_000_000L)
            : _track.NewestTimeUs - lookBackUs;
        var (pending, snapshot) = await store.ReadPendingWithSnapshotAsync(_fleetId, _vehicleId, fromUs, nowUs + (7 * 86_400_000_000L));
        foreach (var s in pending)
        {
            _track.Process(MeasurementRows.ToMeasurement(s), recorder);
        }

        _restored = snapshot;
        if (pending.Count > 0)
        {
            logger.LogInformation("Track {Key} took {Count} stored measurements whose delivery died with another process", this.GetPrimaryKeyString(), pending.Count);
            recorder.Flush();
        }
    }

    private int DeadProcesses() => membership.CurrentSnapshot.Members.Values.Count(m => m.Status == Orleans.Runtime.SiloStatus.Dead);

    public async Task RebuildAsync(long fromUs)
    {
        var (recorder, checkpoints) = Parts();
        checkpoints.Abandon();
        recorder.Discard();
        DeactivateOnIdle();
        await store.DeleteCheckpointsFromAsync(_fleetId, _vehicleId, fromUs);
        logger.LogInformation("Track {Key} will be rebuilt from the store (measurements from {FromUs} may have missed it)", this.GetPrimaryKeyString(), fromUs);
    }

    public async Task PersistCheckpointAsync()
    {
        if (_recorder is not { } recorder || _checkpoints is not { } checkpoints || checkpoints.Abandoned)
        {
            return;
        }

        recorder.Flush();
        await checkpoints.PersistAsync(_track, recorder.LastTicket);
    }

    private (TrackOutcomeRecorder Recorder, TrackCheckpointKeeper Checkpoints) Parts() =>
        _recorder is { } recorder && _checkpoints is { } checkpoints
            ? (recorder, checkpoints)
            : throw new InvalidOperationException("track " + this.GetPrimaryKeyString() + " is not activated");
}
