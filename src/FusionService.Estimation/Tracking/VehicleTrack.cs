using FusionService.Estimation.Filtering;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// One vehicle's live track: processes measurements in canonical order (time, sensor kind, message key) whatever
/// order they arrive in. A measurement older than the newest one but inside the lag window is inserted and the track is
/// re-processed from the newest posterior checkpoint before it, which is exact for the extended filter because every
/// later step is re-linearised (the reference that Bar-Shalom 2002, "Update with out-of-sequence measurements in
/// tracking: exact solution", IEEE T-AES 38(3), measures cheaper methods against). Exact duplicates are ignored.
/// The newest checkpoints lie a second apart and the older ones five (<see cref="TrackOptions.RecentCheckpointIntervalS"/>,
/// <see cref="TrackOptions.CheckpointIntervalS"/>), so a sample a few tenths of a second late (a gateway's concurrent
/// batches) replays about half a second, one 30 s late at most a checkpoint interval.
/// Memory is bounded by the lag window plus one checkpoint interval. A measurement the filter fails on numerically
/// (<see cref="FilterDivergenceException"/>) is judged <see cref="OutcomeKind.Unusable"/> and skipped: the state stays
/// what it was before it, so one poisoned measurement never stops the track, and a re-processing (late data, a restart)
/// judges it the same way.
/// </summary>
/// <remarks>Not thread-safe: one caller at a time (a track grain).</remarks>
public sealed class VehicleTrack
{
    private readonly TrackProcessor _processor;
    private readonly long _windowUs;
    private readonly long _checkpointIntervalUs;
    private readonly long _recentCheckpointIntervalUs;
    private readonly int _recentCheckpoints;
    private Measurement[] _buffer = new Measurement[64];
    private int _start;
    private int _count;
    private CheckpointSlot[] _checkpoints;
    private int _checkpointCount;
    private TrackState _current = TrackState.Empty;
    private long _lastCheckpointUs;
    private Measurement _floor;
    private bool _hasFloor;

    /// <summary>Creates an empty track.</summary>
    public VehicleTrack(TrackOptions options, NoiseProfile profile)
        : this(new TrackProcessor(options, profile))
    {
    }

    /// <summary>Creates an empty track sharing a processor (options, profile and gate) with other tracks.</summary>
    public VehicleTrack(TrackProcessor processor)
    {
        ArgumentNullException.ThrowIfNull(processor);
        _processor = processor;
        _windowUs = (long)Math.Round(processor.Options.LagWindowS * 1e6);
        _checkpointIntervalUs = (long)Math.Round(processor.Options.CheckpointIntervalS * 1e6);
        _recentCheckpointIntervalUs = (long)Math.Round(processor.Options.RecentCheckpointIntervalS * 1e6);
        _recentCheckpoints = processor.Options.RecentCheckpoints;
        _checkpoints = new CheckpointSlot[MaxCheckpoints(processor.Options)];
        for (int i = 0; i < _checkpoints.Length; i++)
        {
            _checkpoints[i] = new CheckpointSlot();
        }

        _checkpoints[0].Store(TrackState.Empty, default, true);
        _checkpointCount = 1;
        _lastCheckpointUs = long.MinValue;
        NewestTimeUs = long.MinValue;
    }

    /// <summary>
    /// Creates a track that has seen nothing yet and starts from <paramref name="start"/>, a fresh state such as
    /// <see cref="TrackState.StartingFrom"/> gives (its receiver fit starting from a given pair).
    /// </summary>
    public VehicleTrack(TrackProcessor processor, in TrackState start)
        : this(processor)
    {
        if (start.Phase != TrackPhase.Empty || start.TimeUs != long.MinValue)
        {
            throw new ArgumentException("a start state has seen no measurement; continue from a checkpoint with its last measurement instead", nameof(start));
        }

        _current = start;
        _checkpoints[0].Store(start, default, true);
    }

    /// <summary>
    /// Creates a track that continues from a stored checkpoint (see <see cref="BaseCheckpoint"/>), for example after a
    /// restart: feed it the stored measurements that follow <paramref name="last"/> in canonical order and it reaches the
    /// state an uninterrupted track would have. Measurements at or before <paramref name="last"/> are too late.
    /// </summary>
    /// <param name="processor">Shared processor (the same options and profile as the track that made the checkpoint).</param>
    /// <param name="state">State after <paramref name="last"/>.</param>
    /// <param name="last">The last measurement the state includes.</param>
    public VehicleTrack(TrackProcessor processor, in TrackState state, in Measurement last)
        : this(processor)
    {
        _current = state;
        _floor = last;
        _hasFloor = true;
        _checkpoints[0].Store(state, last, true);
        NewestTimeUs = last.TimeUs;
        _lastCheckpointUs = last.TimeUs;
    }

    /// <summary>
    /// The oldest checkpoint the track holds and the last measurement it includes (null for a track that has not
    /// evicted anything yet, whose base is the empty state). Every measurement after it that is still inside the lag
    /// window is held, so this is the checkpoint to persist for a restart.
    /// </summary>
    public (TrackState State, Measurement? Last) BaseCheckpoint => (_checkpoints[0].Restore(), BaseCheckpointLast);

    /// <summary>The last measurement in <see cref="BaseCheckpoint"/>, without decoding its state.</summary>
    public Measurement? BaseCheckpointLast
    {
        get
        {
            CheckpointSlot c = _checkpoints[0];
            return c.IsOrigin && !_hasFloor ? null : c.Last;
        }
    }

    /// <summary>The state after every held measurement.</summary>
    public ref readonly TrackState Current => ref _current;

    /// <summary>Time of the newest measurement seen, Unix microseconds (<see cref="long.MinValue"/> before any).</summary>
    public long NewestTimeUs { get; private set; }

    /// <summary>Number of measurements held for re-processing.</summary>
    public int HeldMeasurements => _count;

    /// <summary>Number of posterior checkpoints held.</summary>
    public int HeldCheckpoints => _checkpointCount;

    /// <summary>Processor (options, profile, gate) of this track.</summary>
    public TrackProcessor Processor => _processor;

    /// <summary>Approximate bytes of memory this track holds (buffers and checkpoints, not the object headers).</summary>
    public long ApproximateBytes =>
        (_buffer.Length * (long)System.Runtime.CompilerServices.Unsafe.SizeOf<Measurement>())
        + (_checkpoints.Length * (long)CheckpointSlot.ApproximateBytes)
        + System.Runtime.CompilerServices.Unsafe.SizeOf<TrackState>();

    /// <summary>
    /// Whether <paramref name="m"/> would be judged too late now: older than the replay window behind the newest
    /// measurement, or at or before the floor the track was restored from.
    /// </summary>
    public bool IsTooLate(in Measurement m) =>
        (NewestTimeUs != long.MinValue && m.TimeUs < NewestTimeUs - _windowUs) || (_hasFloor && CompareKey(m, _floor) <= 0);

    /// <summary>
    /// Processes a measurement that may arrive late, duplicated or out of order; the observer hears the outcome of it and
    /// of every measurement re-processed because of it.
    /// </summary>
    /// <returns>The outcome of <paramref name="m"/> itself.</returns>
    public MeasurementOutcome Process(in Measurement m, ITrackObserver? observer = null)
    {
        if (IsTooLate(m))
        {
            return Report(m, MeasurementOutcome.Of(OutcomeKind.TooLate), observer);
        }

        int index = LowerBound(m);
        if (index < _count && CompareKey(Held(index), m) == 0)
        {
            var kind = Held(index).Equals(m) ? OutcomeKind.Duplicate : OutcomeKind.Conflict;
            return Report(m, MeasurementOutcome.Of(kind), observer);
        }

        MeasurementOutcome outcome = index == _count ? Append(m, observer) : Insert(index, m, observer);
        if (m.TimeUs > NewestTimeUs)
        {
            NewestTimeUs = m.TimeUs;
        }

        Evict();
        return outcome;
    }

    private MeasurementOutcome Report(in Measurement m, in MeasurementOutcome outcome, ITrackObserver? observer)
    {
        observer?.OnOutcome(m, outcome, _current, false);
        return outcome;
    }

    private MeasurementOutcome Append(in Measurement m, ITrackObserver? observer)
    {
        MeasurementOutcome outcome = ProcessOrSkip(ref _current, m);
        EnsureBufferRoom();
        _buffer[_start + _count] = m;
        _count++;
        MaybeCheckpoint(m);
        observer?.OnOutcome(m, outcome, _current, false);
        return outcome;
    }

    private MeasurementOutcome Insert(int index, in Measurement m, ITrackObserver? observer)
    {
        EnsureBufferRoom();
        Array.Copy(_buffer, _start + index, _buffer, _start + index + 1, _count - index);
        _buffer[_start + index] = m;
        _count++;

        int checkpoint = _checkpointCount - 1;
        while (!_checkpoints[checkpoint].IsOrigin && CompareKey(_checkpoints[checkpoint].Last, m) >= 0)
        {
            checkpoint--;
        }

        _checkpointCount = checkpoint + 1;
        CheckpointSlot from = _checkpoints[checkpoint];
        TrackState state = from.Restore();
        _lastCheckpointUs = from.IsOrigin ? long.MinValue : from.Last.TimeUs;
        int first = from.IsOrigin ? 0 : IndexAfter(from.Last);
        MeasurementOutcome own = default;
        for (int i = first; i < _count; i++)
        {
            ref readonly Measurement held = ref _buffer[_start + i];
            MeasurementOutcome outcome = ProcessOrSkip(ref state, held);
            _current = state;
            MaybeCheckpoint(held);
            bool isOwn = i == index;
            if (isOwn)
            {
                own = outcome;
            }

            // Before the inserted measurement the pass repeats the last one step for step (same checkpoint, same
            // measurements, a lossless state codec), so those outcomes are not reported again: a late fix a tenth of a
            // second behind would otherwise re-report up to a checkpoint interval of unchanged verdicts and states.
            if (i >= index)
            {
                observer?.OnOutcome(held, outcome, state, !isOwn);
            }
        }

        _current = state;
        return own;
    }

    private MeasurementOutcome ProcessOrSkip(ref TrackState state, in Measurement m) => ProcessOrSkip(_processor, ref state, m, null);

    /// <summary>
    /// Processes <paramref name="m"/> on a copy of <paramref name="state"/> and keeps the copy only when the filter
    /// succeeded; a numeric failure (<see cref="FilterDivergenceException"/>) leaves <paramref name="state"/> untouched
    /// and judges the measurement <see cref="OutcomeKind.Unusable"/>. Every pass over stored data (the live track, its
    /// replays, the smoothing passes) goes through here, so they all skip the same measurements. A recorder may then have
    /// heard a <see cref="IStepRecorder.Predicted"/> without its <see cref="IStepRecorder.Posterior"/>; the next
    /// measurement's prediction replaces it.
    /// </summary>
    public static MeasurementOutcome ProcessOrSkip(TrackProcessor processor, ref TrackState state, in Measurement m, IStepRecorder? recorder)
    {
        ArgumentNullException.ThrowIfNull(processor);
        TrackState next = state;
        try
        {
            MeasurementOutcome outcome = processor.Process(ref next, m, recorder);
            state = next;
            return outcome;
        }
        catch (FilterDivergenceException ex)
        {
            return MeasurementOutcome.UnusableBecause(ex.Message);
        }
    }

    /// <summary>
    /// Most checkpoints a track holds: the base, one per <see cref="TrackOptions.CheckpointIntervalS"/> of the window and
    /// the interval the base may lie before it, and the <see cref="TrackOptions.RecentCheckpoints"/> newest.
    /// </summary>
    public static int MaxCheckpoints(TrackOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        return (int)Math.Ceiling(options.LagWindowS / options.CheckpointIntervalS) + 3 + options.RecentCheckpoints;
    }

    private void MaybeCheckpoint(in Measurement m)
    {
        if (_lastCheckpointUs != long.MinValue && m.TimeUs - _lastCheckpointUs < _recentCheckpointIntervalUs)
        {
            return;
        }

        if (_checkpointCount == _checkpoints.Length)
        {
            int old = _checkpoints.Length;
            Array.Resize(ref _checkpoints, old * 2);
            for (int i = old; i < _checkpoints.Length; i++)
            {
                _checkpoints[i] = new CheckpointSlot();
            }
        }

        _checkpoints[_checkpointCount++].Store(_current, m, false);
        _lastCheckpointUs = m.TimeUs;
        ThinOlderCheckpoints();
    }

    /// <summary>
    /// Keeps the checkpoints before the <see cref="TrackOptions.RecentCheckpoints"/> newest at least a
    /// <see cref="TrackOptions.CheckpointIntervalS"/> apart (the base always, then greedily from the oldest), the newest
    /// all. Dropped slots move behind the held ones for reuse, so thinning never allocates; a stable partition by swaps
    /// keeps the held ones in order.
    /// </summary>
    private void ThinOlderCheckpoints()
    {
        CheckpointSlot origin = _checkpoints[0];
        long keptUs = origin.IsOrigin ? long.MinValue : origin.Last.TimeUs;
        int recentFrom = _checkpointCount - _recentCheckpoints;
        int write = 1;
        for (int read = 1; read < _checkpointCount; read++)
        {
            long timeUs = _checkpoints[read].Last.TimeUs;
            if (read < recentFrom && keptUs != long.MinValue && timeUs - keptUs < _checkpointIntervalUs)
            {
                continue;
            }

            (_checkpoints[write], _checkpoints[read]) = (_checkpoints[read], _checkpoints[write]);
            write++;
            keptUs = timeUs;
        }

        _checkpointCount = write;
    }

    /// <summary>Drops what no measurement inside the window can need: checkpoints before the newest one older than the window, and the measurements before it.</summary>
    private void Evict()
    {
        long horizonUs = NewestTimeUs - _windowUs;
        int baseIndex = 0;
        for (int i = 1; i < _checkpointCount; i++)
        {
            if (_checkpoints[i].Last.TimeUs < horizonUs)
            {
                baseIndex = i;
            }
        }

        if (baseIndex == 0)
        {
            return;
        }

        int keep = IndexAfter(_checkpoints[baseIndex].Last);
        _start += keep;
        _count -= keep;

        // Rotate the slots: the dropped ones go to the end for reuse, so checkpoints never allocate.
        Array.Reverse(_checkpoints, 0, baseIndex);
        Array.Reverse(_checkpoints, baseIndex, _checkpoints.Length - baseIndex);
        Array.Reverse(_checkpoints);
        _checkpointCount -= baseIndex;
    }

    private void EnsureBufferRoom()
    {
        if (_start + _count < _buffer.Length)
        {
            return;
        }

        if (_count + 1 > _buffer.Length - (_buffer.Length / 32))
        {
            // Grow by an eighth, and otherwise slide the window down: a full window stays within a few percent of its
            // real size, at the price of moving the held measurements once every 1/32 of the buffer.
            var larger = new Measurement[Math.Max(_buffer.Length + (_buffer.Length / 8), _count + 16)];
            Array.Copy(_buffer, _start, larger, 0, _count);
            _buffer = larger;
        }
        else
        {
            Array.Copy(_buffer, _start, _buffer, 0, _count);
        }

        _start = 0;
    }

    private ref readonly Measurement Held(int index) => ref _buffer[_start + index];

    /// <summary>Index of the first held measurement after <paramref name="m"/> in canonical order (m itself may have been evicted).</summary>
    private int IndexAfter(in Measurement m)
    {
        int index = LowerBound(m);
        return index < _count && CompareKey(Held(index), m) == 0 ? index + 1 : index;
    }

    /// <summary>Index of the first held measurement whose canonical key is not less than <paramref name="m"/>'s.</summary>
    private int LowerBound(in Measurement m)
    {
        int lo = 0, hi = _count;
        while (lo < hi)
        {
            int mid = (lo + hi) >>> 1;
            if (CompareKey(Held(mid), m) < 0)
            {
                lo = mid + 1;
            }
            else
            {
                hi = mid;
            }
        }

        return lo;
    }

    /// <summary>Canonical processing order: time, then sensor kind, then message key.</summary>
    public static int CompareKey(in Measurement a, in Measurement b)
    {
        int c = a.TimeUs.CompareTo(b.TimeUs);
        return c != 0 ? c : a.OrderKey.CompareTo(b.OrderKey);
    }

    /// <summary>A reusable checkpoint: the state in its 0.5 KB encoded form (a third of the struct's size) and the last measurement it includes.</summary>
    private sealed class CheckpointSlot
    {
        public const int ApproximateBytes = TrackStateCodec.EncodedLength + 96;

        private readonly byte[] _encoded = new byte[TrackStateCodec.EncodedLength];

        public Measurement Last { get; private set; }

        public bool IsOrigin { get; private set; }

        public void Store(in TrackState state, in Measurement last, bool isOrigin)
        {
            TrackStateCodec.EncodeInto(state, last, _encoded);
            Last = last;
            IsOrigin = isOrigin;
        }

        public TrackState Restore() => TrackStateCodec.Decode(_encoded).State;
    }
}
