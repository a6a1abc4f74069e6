// When one vehicle's track stores its checkpoint, and which checkpoints it keeps.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Checkpoints;

namespace FusionService.Tracking;

/// <summary>
/// Keeps one vehicle's base checkpoints: one is due every <see cref="TrackGrainOptions.CheckpointIntervalS"/> (server
/// clock) or when the base has moved <see cref="TrackGrainOptions.HistoryCheckpointSpacingMin"/> past the newest one
/// kept as history; it is taken at once but stored only after the write queue has written every verdict and fused
/// state queued before it (a checkpoint stored before them would, after a crash, make the restore skip measurements
/// whose verdicts were lost, leaving them pending for good). Storing one deletes those it supersedes. Not thread-safe
/// (one grain).
/// </summary>
internal sealed class TrackCheckpointKeeper(
    Guid fleetId, string vehicleId, string trackKey, TrackStore store, TrackWriteQueue writes, TrackGrainOptions options, TimeProvider time, ILogger logger)
{
    private readonly long _historySpacingUs = (long)Math.Round(options.HistoryCheckpointSpacingMin * 6e7);
    private long _lastPersistedUs = long.MinValue;

    // The newest stored checkpoint kept as history (see TrackGrainOptions.HistoryCheckpointSpacingMin).
    private long _lastHistoryUs = long.MinValue;
    private DateTimeOffset _lastPersistAt;

    // A base checkpoint taken when one was due, with the write-queue ticket of the rows it covers.
    private (TrackState State, Measurement Last, long Ticket)? _candidate;

    /// <summary>True once the track is to be rebuilt from the store: no checkpoint is stored any more.</summary>
    public bool Abandoned { get; private set; }

    /// <summary>Notes that the track was restored from the checkpoint ending at <paramref name="lastUs"/> (stored, and kept as history).</summary>
    public void RestoredFrom(long lastUs)
    {
        _lastPersistedUs = lastUs;
        _lastHistoryUs = lastUs;
    }

    /// <summary>Starts the interval to the next checkpoint now (server clock).</summary>
    public void StartInterval() => _lastPersistAt = time.GetUtcNow();

    /// <summary>Stores no checkpoint any more and forgets the one waiting (the track is to be rebuilt).</summary>
    public void Abandon()
    {
        Abandoned = true;
        _candidate = null;
    }

    /// <summary>
    /// After a batch: stores the waiting checkpoint once its rows are written, and takes the base checkpoint of
    /// <paramref name="track"/> when one is due and none waits (never waiting for the queue here).
    /// </summary>
    public async Task AfterBatchAsync(VehicleTrack track, long lastTicket)
    {
        if (_candidate is { } ready && writes.WrittenThrough >= ready.Ticket)
        {
            _candidate = null;
            await StoreAsync(ready.State, ready.Last);
        }

        if (_candidate is null && !Abandoned
            && ((time.GetUtcNow() - _lastPersistAt).TotalSeconds >= options.CheckpointIntervalS || HistoryCheckpointDue(track)))
        {
            // Due: take the base checkpoint now, store it once the rows it covers are written (never waiting here).
            _lastPersistAt = time.GetUtcNow();
            var (state, last) = track.BaseCheckpoint;
            if (last is { } lastMeasurement && lastMeasurement.TimeUs != _lastPersistedUs)
            {
                _candidate = (state, lastMeasurement, lastTicket);
            }
        }
    }

    /// <summary>
    /// Stores the base checkpoint of <paramref name="track"/> now, after waiting up to
    /// <see cref="TrackGrainOptions.DrainTimeoutS"/> for the rows up to <paramref name="lastTicket"/> to be written (none
    /// is stored when they are not); a checkpoint still waiting is stored first.
    /// </summary>
    public async Task PersistAsync(VehicleTrack track, long lastTicket)
    {
        var (state, last) = track.BaseCheckpoint;
        _lastPersistAt = time.GetUtcNow();
        if (last is not { } lastMeasurement || lastMeasurement.TimeUs == _lastPersistedUs)
        {
            return;
        }

        // Only after the verdicts and fused states the checkpoint covers are stored.
        using var wait = new CancellationTokenSource(TimeSpan.FromSeconds(options.DrainTimeoutS));
        if (!await writes.WaitWrittenAsync(lastTicket, wait.Token))
        {
            logger.LogInformation("Track {Key} stores no checkpoint: its verdicts are not written yet", trackKey);
            return;
        }

        // A checkpoint taken earlier and still waiting goes first: it may be one kept as history.
        if (_candidate is { } earlier)
        {
            _candidate = null;
            await StoreAsync(earlier.State, earlier.Last);
        }

        await StoreAsync(state, lastMeasurement);
    }

    private async Task StoreAsync(TrackState state, Measurement lastMeasurement)
    {
        if (Abandoned || lastMeasurement.TimeUs == _lastPersistedUs)
        {
            return;
        }

        var anchor = state.HasPlane ? state.Plane.Anchor : default;
        await store.StoreCheckpointAsync(
            new FilterCheckpointRow(
                fleetId,
                vehicleId,
                lastMeasurement.TimeUs,
                anchor.LatitudeDeg,
                anchor.LongitudeDeg,
                TrackStateCodec.Version,
                TrackStateCodec.Encode(state, lastMeasurement)),
            // The checkpoints between the newest one kept as history and this one are superseded by it.
            _historySpacingUs > 0 ? _lastHistoryUs : long.MinValue);
        _lastPersistedUs = lastMeasurement.TimeUs;
        if (_historySpacingUs > 0 && (_lastHistoryUs == long.MinValue || lastMeasurement.TimeUs - _lastHistoryUs >= _historySpacingUs))
        {
            _lastHistoryUs = lastMeasurement.TimeUs;
        }
    }

    /// <summary>Whether the track's base checkpoint has moved a history spacing past the newest one kept.</summary>
    private bool HistoryCheckpointDue(VehicleTrack track) =>
        _historySpacingUs > 0 && track.BaseCheckpointLast is { } last
        && (_lastHistoryUs == long.MinValue || last.TimeUs - _lastHistoryUs >= _historySpacingUs);
}
