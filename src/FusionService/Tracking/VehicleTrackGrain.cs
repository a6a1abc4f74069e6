// The grain that runs one vehicle's track.
using FusionService.Database;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Operations;
using FusionService.Storage.Checkpoints;
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
    IOptions<TrackGrainOptions> options,
    IOptions<DatabaseOptions> databaseOptions,
    IOptions<GnssErrorModelOptions> gnssErrorModel,
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

    // The newest commit (transaction id) whose measurements the track holds: one handed over, or the highest a restore
    // may have read. A later hand-over of an older commit was overtaken on its way here.
    private long _newestStamp;

    public override async Task OnActivateAsync(CancellationToken cancellationToken)
    {
        (_fleetId, _vehicleId) = GrainKeys.Parse(this.GetPrimaryKeyString());
        _deadSeen = DeadProcesses();
        var recorder = _recorder = parts.CreateRecorder(_fleetId, _vehicleId);
        var checkpoints = _checkpoints = parts.CreateCheckpointKeeper(_fleetId, _vehicleId, this.GetPrimaryKeyString());
        long nowUs = UnixMicroseconds.Now(time);
        long fromUs = nowUs - ((databaseOptions.Value.DaysBack + 1) * 86_400_000_000L);
        var checkpoint = await RestorePointAsync(fromUs, cancellationToken);
        Measurement? floor = null;
        if (checkpoint is { } row)
        {
            var (state, last) = TrackStateCodec.Decode(row.Payload.Span);
            _track = new VehicleTrack(processor, state, last);
            floor = last;
            fromUs = last.TimeUs;
            checkpoints.RestoredFrom(last.TimeUs);
        }
        else
        {
            // From the vehicle's first kept measurement: the start its receiver fit was given (decided now for a vehicle
            // the fleet has not had before), as every replay from there starts.
            _track = new VehicleTrack(processor, await store.DecideStartAsync(_fleetId, _vehicleId, gnssErrorModel.Value, cancellationToken));
        }

        var (stored, snapshot) = await store.ReadWithSnapshotAsync(_fleetId, _vehicleId, fromUs, nowUs + (7 * 86_400_000_000L), cancellationToken);
        _restored = snapshot;
        _newestStamp = snapshot.Xmax - 1;
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

        checkpoints.StartInterval();
        recorder.Flush();
        await recorder.Alerts.FlushAsync(live: false, time.GetUtcNow());
        logger.LogDebug("Track {Key} restored: checkpoint {HasCheckpoint}, {Replayed} measurements re-processed", this.GetPrimaryKeyString(), floor is not null, replayed);
        await base.OnActivateAsync(cancellationToken);
    }

    /// <summary>
    /// The stored checkpoint to restore from: the newest one, unless stored measurements at or before it were never
    /// judged (their hand-over died with a process, or was overtaken by a later commit's from another process). The
    /// track was handed them after their commit was acknowledged, so it must fuse them; it cannot go back behind a
    /// checkpoint, so it restores from the newest checkpoint before the oldest of them (from the start of the kept days
    /// when there is none), deleting the checkpoints they invalidate, and the replay fuses them in order. Only the
    /// <see cref="TrackGrainOptions.PendingLookBackMin"/> minutes of data before the newest checkpoint are searched;
    /// older pending rows are left as they are.
    /// </summary>
    private async Task<FilterCheckpointRow?> RestorePointAsync(long keptFromUs, CancellationToken cancellationToken)
    {
        var newest = await store.NewestCheckpointAsync(_fleetId, _vehicleId, cancellationToken);
        if (newest is not { } row || !TrackStateCodec.CanDecode(row.PayloadVersion))
        {
            return null;
        }

        if (options.Value.PendingLookBackMin <= 0)
        {
            return row;
        }

        var (_, floor) = TrackStateCodec.Decode(row.Payload.Span);
        long lookBackUs = (long)Math.Round(options.Value.PendingLookBackMin * 6e7);
        var pending = await store.ReadPendingAsync(_fleetId, _vehicleId, Math.Max(floor.TimeUs - lookBackUs, keptFromUs), floor.TimeUs + 1, cancellationToken);
        var behind = pending.Select(r => MeasurementRows.ToMeasurement(r)).Where(m => VehicleTrack.CompareKey(m, floor) <= 0).ToList();
        if (behind.Count == 0)
        {
            return row;
        }

        long earliestUs = behind.Min(m => m.TimeUs);
        logger.LogInformation(
            "Track {Key} restores from before {EarliestUs}: {Count} stored measurements at or before its newest checkpoint were never judged",
            this.GetPrimaryKeyString(),
            earliestUs,
            behind.Count);
        var earlier = await store.CheckpointBeforeAsync(_fleetId, _vehicleId, earliestUs, cancellationToken);
        return earlier is { } e && TrackStateCodec.CanDecode(e.PayloadVersion) ? e : null;
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

    public Task ProcessAsync(TrackMeasurement[] batch, CommitStamp stamp)
    {
        ArgumentNullException.ThrowIfNull(batch);
        return ProcessManyAsync([new TrackDelivery(batch, stamp)]);
    }

    public async Task ProcessManyAsync(TrackDelivery[] deliveries)
    {
        ArgumentNullException.ThrowIfNull(deliveries);
        int count = 0;
        foreach (var delivery in deliveries)
        {
            count += delivery.Batch.Length;
        }

        using var span = FusionTelemetry.StartTrackProcess(this.GetPrimaryKeyString(), count);
        var (recorder, checkpoints) = Parts();
        if (checkpoints.Abandoned || !await CatchUpAfterDeathsAsync())
        {
            // To be rebuilt: the next activation's restore reads these from the store.
            return;
        }

        var fuse = new List<Measurement>(count);
        long newestStamp = _newestStamp;
        foreach (var (batch, stamp) in deliveries)
        {
            if (_restored is { } restored && restored.Holds(stamp.TransactionId))
            {
                // Committed before this activation read the store: the restore processed these already, in order.
                continue;
            }

            if (stamp.TransactionId > 0 && stamp.TransactionId < newestStamp && Array.Exists(batch, item => _track.IsTooLate(item.ToMeasurement())))
            {
                // Committed before data the track already holds: another process handed over a later commit first. The
                // sender sent these first, so they are not late; the track is rebuilt from the store, which fuses them
                // (and the other batches of this call, committed too) in order.
                logger.LogInformation(
                    "Track {Key} was handed commit {Stamp} after later ones and is rebuilt to fuse it in order", this.GetPrimaryKeyString(), stamp.TransactionId);
                RestoreAgain();
                return;
            }

            newestStamp = Math.Max(newestStamp, stamp.TransactionId);
            foreach (var item in batch)
            {
                fuse.Add(item.ToMeasurement());
            }
        }

        _newestStamp = newestStamp;
        if (deliveries.Length > 1)
        {
            // Batches that queued behind each other, in canonical order: the track's result does not depend on the order
            // (exact re-processing), but each measurement older than one already processed costs a re-processing.
            fuse.Sort(static (a, b) => VehicleTrack.CompareKey(a, b));
        }

        try
        {
            foreach (var m in fuse)
            {
                _track.Process(m, recorder);
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
        if (!Parts().Checkpoints.Abandoned)
        {
            await CatchUpAfterDeathsAsync();
        }

        return VehicleStateSnapshot.Of(processor, _track.Current, Parts().Recorder.LastTimeUsBySensor());
    }

    /// <summary>
    /// A process that dies between a commit and the delivery of its batch leaves those rows pending, and a track living
    /// elsewhere never hears of them (a track in the dead process is rebuilt from the store anyway). So once more
    /// processes of the cluster have been declared dead than when the track last looked, it reads its vehicle's pending
    /// rows from <see cref="TrackGrainOptions.PendingLookBackMin"/> before its newest data on, under a snapshot (after
    /// its own queued verdicts are written, so that rows it has judged do not look pending), and processes them (late
    /// data inside the window is fused in order; when one lies behind the window, the track is rebuilt from the store
    /// instead, which fuses them in order). Deliveries of commits that snapshot holds are then skipped, as after a restore.
    /// </summary>
    /// <returns>False when the track is to be rebuilt instead.</returns>
    private async Task<bool> CatchUpAfterDeathsAsync()
    {
        int dead = DeadProcesses();
        if (dead == _deadSeen)
        {
            return true;
        }

        var recorder = Parts().Recorder;
        recorder.Flush();
        if (!await recorder.WaitWrittenAsync(TimeSpan.FromSeconds(options.Value.DrainTimeoutS)))
        {
            // The store refuses writes: the catch-up waits for a later call.
            return true;
        }

        _deadSeen = dead;
        long nowUs = UnixMicroseconds.Now(time);
        long lookBackUs = (long)Math.Round(Math.Max(options.Value.PendingLookBackMin, 1) * 6e7);
        long fromUs = _track.NewestTimeUs == long.MinValue
            ? nowUs - ((databaseOptions.Value.DaysBack + 1) * 86_400_000_000L)
            : _track.NewestTimeUs - lookBackUs;
        var (pending, snapshot) = await store.ReadPendingWithSnapshotAsync(_fleetId, _vehicleId, fromUs, nowUs + (7 * 86_400_000_000L));
        var measurements = pending.Select(r => MeasurementRows.ToMeasurement(r)).ToList();
        if (measurements.Exists(m => _track.IsTooLate(m)))
        {
            logger.LogInformation(
                "Track {Key} is rebuilt to fuse {Count} stored measurements whose delivery died with another process", this.GetPrimaryKeyString(), pending.Count);
            RestoreAgain();
            return false;
        }

        foreach (var m in measurements)
        {
            _track.Process(m, recorder);
        }

        _restored = snapshot;
        _newestStamp = Math.Max(_newestStamp, snapshot.Xmax - 1);
        if (pending.Count > 0)
        {
            logger.LogInformation("Track {Key} took {Count} stored measurements whose delivery died with another process", this.GetPrimaryKeyString(), pending.Count);
            recorder.Flush();
        }

        return true;
    }

    private int DeadProcesses() => membership.CurrentSnapshot.Members.Values.Count(m => m.Status == Orleans.Runtime.SiloStatus.Dead);

    /// <summary>
    /// Stops this activation from taking, checkpointing or writing anything more: it deactivates when idle, and the next
    /// activation restores from the store (<see cref="RestorePointAsync"/>).
    /// </summary>
    private void RestoreAgain()
    {
        var (recorder, checkpoints) = Parts();
        checkpoints.Abandon();
        recorder.Discard();
        DeactivateOnIdle();
    }

    public async Task RebuildAsync(long fromUs)
    {
        RestoreAgain();
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
