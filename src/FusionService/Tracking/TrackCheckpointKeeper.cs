// When one vehicle's track stores its checkpoint, and which checkpoints it keeps.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Checkpoints;

namespace FusionService.Tracking;

/// <summary>
/// Keeps one vehicle's base checkpoints: one is due every <see cref="TrackGrainOptions.CheckpointIntervalS"/> (server
/// clock) or when the base has moved <see cref="TrackGrainOptions.HistoryCheckpointSpacingMin"/> past the newest one
/// kept as history; it is taken at once but stored only after the write queue has written every verdict and fused
/// state queued before it (a checkpoint stored before them would, after a crash, make the restore skip measurements
/// whose verdicts were lost, leaving them pending for good). Checkpoints taken while earlier ones wait queue up (a
/// history one is never skipped because the writes were slow; a waiting one that would not be kept as history is
/// replaced by the next), so the history spacing depends on data time alone. Storing one deletes those it
/// supersedes. Not thread-safe (one grain).
/// </summary>
internal sealed class TrackCheckpointKeeper(
    Guid fleetId, string vehicleId, string trackKey, TrackStore store, TrackWriteQueue writes, TrackGrainOptions options, TimeProvider time, ILogger logger)
{
    private readonly long _historySpacingUs = (long)Math.Round(options.HistoryCheckpointSpacingMin * 6e7);
    private long _lastPersistedUs = long.MinValue;

    // The receiver fit last stored beside a checkpoint: it changes only when a standing van closes a long-lag pair, so
    // most checkpoints store none.
    private (double Share, double TimeConstantS, double LongCount) _storedFit;

    // At most this many checkpoints wait for their rows (only while the writes stall for long); none is taken beyond.
    private const int MaxWaiting = 16;

    // The newest stored checkpoint kept as history (see TrackGrainOptions.HistoryCheckpointSpacingMin).
    private long _lastHistoryUs = long.MinValue;
    private DateTimeOffset _lastPersistAt;

    // Base checkpoints taken when one was due, oldest first, with the write-queue ticket of the rows each covers.
    private readonly List<Waiting> _waiting = [];

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
        _waiting.Clear();
    }

    /// <summary>
    /// After a batch: stores the waiting checkpoints whose rows are written, and takes the base checkpoint of
    /// <paramref name="track"/> when one is due (never waiting for the queue here).
    /// </summary>
    public async Task AfterBatchAsync(VehicleTrack track, long lastTicket)
    {
        await StoreWrittenAsync(writes.WrittenThrough);
        if (!Abandoned && _waiting.Count < MaxWaiting
            && ((time.GetUtcNow() - _lastPersistAt).TotalSeconds >= options.CheckpointIntervalS || HistoryCheckpointDue(track)))
        {
            // Due: take the base checkpoint now, store it once the rows it covers are written (never waiting here).
            _lastPersistAt = time.GetUtcNow();
            var (state, last) = track.BaseCheckpoint;
            if (last is { } lastMeasurement && lastMeasurement.TimeUs != LastTakenUs)
            {
                bool history = KeptAsHistory(lastMeasurement.TimeUs, LastHistoryTakenUs);
                if (_waiting.Count > 0 && !_waiting[^1].History)
                {
                    _waiting.RemoveAt(_waiting.Count - 1); // superseded by this one before it was stored
                }

                _waiting.Add(new Waiting(state, lastMeasurement, lastTicket, history));
            }
        }
    }

    /// <summary>
    /// Stores the base checkpoint of <paramref name="track"/> now, after waiting up to
    /// <see cref="TrackGrainOptions.DrainTimeoutS"/> for the rows up to <paramref name="lastTicket"/> to be written (none
    /// is stored when they are not); the checkpoints still waiting are stored first.
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

        // Checkpoints taken earlier and still waiting go first: they may be kept as history.
        await StoreWrittenAsync(lastTicket);
        await StoreAsync(state, lastMeasurement);
    }

    /// <summary>Stores, oldest first, the waiting checkpoints whose rows are written through <paramref name="writtenThrough"/>.</summary>
    private async Task StoreWrittenAsync(long writtenThrough)
    {
        while (_waiting.Count > 0 && _waiting[0].Ticket <= writtenThrough)
        {
            var next = _waiting[0];
            _waiting.RemoveAt(0);
            await StoreAsync(next.State, next.Last);
        }
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
            _historySpacingUs > 0 ? _lastHistoryUs : long.MinValue,
            FitChanged(state.GnssErrorFit) ? state.GnssErrorFit : null);
        _storedFit = (state.GnssErrorFit.Share, state.GnssErrorFit.TimeConstantS, state.GnssErrorFit.LongCount);
        _lastPersistedUs = lastMeasurement.TimeUs;
        if (KeptAsHistory(lastMeasurement.TimeUs, _lastHistoryUs))
        {
            _lastHistoryUs = lastMeasurement.TimeUs;
        }
    }

    /// <summary>Whether <paramref name="fit"/> is an estimate other than the one last stored.</summary>
    private bool FitChanged(in GnssErrorVariogram fit) =>
        fit.HasEstimate && (fit.Share, fit.TimeConstantS, fit.LongCount) != _storedFit;

    /// <summary>The newest checkpoint taken, waiting or stored.</summary>
    private long LastTakenUs => _waiting.Count > 0 ? _waiting[^1].Last.TimeUs : _lastPersistedUs;

    /// <summary>The newest checkpoint taken, waiting or stored, that is (or will be) kept as history.</summary>
    private long LastHistoryTakenUs
    {
        get
        {
            for (int i = _waiting.Count - 1; i >= 0; i--)
            {
                if (_waiting[i].History)
                {
                    return _waiting[i].Last.TimeUs;
                }
            }

            return _lastHistoryUs;
        }
    }

    /// <summary>Whether a checkpoint ending at <paramref name="lastUs"/> is kept as history after the one ending at <paramref name="previousHistoryUs"/>.</summary>
    private bool KeptAsHistory(long lastUs, long previousHistoryUs) =>
        _historySpacingUs > 0 && (previousHistoryUs == long.MinValue || lastUs - previousHistoryUs >= _historySpacingUs);

    /// <summary>Whether the track's base checkpoint has moved a history spacing past the newest one taken to keep.</summary>
    private bool HistoryCheckpointDue(VehicleTrack track) =>
        track.BaseCheckpointLast is { } last && KeptAsHistory(last.TimeUs, LastHistoryTakenUs);

    private readonly record struct Waiting(TrackState State, Measurement Last, long Ticket, bool History);
}
