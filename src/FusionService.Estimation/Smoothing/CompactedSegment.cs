using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Smoothing;

/// <summary>
/// One forward segment of the filter as <see cref="CompactingStepRecorder"/> keeps it: only the recorded instants, each
/// linked to the next by one equivalent smoothing step (see the recorder's remarks). Smooth it with
/// <see cref="CompactedRauchTungStriebelSmoother"/>, which overwrites the arrays in place.
/// </summary>
public sealed class CompactedSegment
{
    private long[] _times;
    private LocalTangentPlane[] _planes;
    private StateVector[] _means;
    private StateMatrix[] _covariances;
    private StateMatrix[] _gains;
    private StateVector[] _predictedNext;
    private readonly SegmentArrayPool? _pool;

    /// <summary>Creates an empty segment with room for <paramref name="capacity"/> instants before it grows.</summary>
    /// <param name="capacity">Initial capacity (at least 16 is taken).</param>
    /// <param name="pool">Where the arrays come from and go back to (when the smoothed segment is disposed); null: new arrays.</param>
    public CompactedSegment(int capacity = 16, SegmentArrayPool? pool = null)
    {
        capacity = Math.Max(capacity, 16);
        _pool = pool;
        if (pool is null)
        {
            _times = new long[capacity];
            _planes = new LocalTangentPlane[capacity];
            _means = new StateVector[capacity];
            _covariances = new StateMatrix[capacity];
            _gains = new StateMatrix[capacity];
            _predictedNext = new StateVector[capacity];
        }
        else
        {
            _times = pool.RentTimes(capacity);
            _planes = pool.RentPlanes(capacity);
            _means = pool.RentVectors(capacity);
            _covariances = pool.RentMatrices(capacity);
            _gains = pool.RentMatrices(capacity);
            _predictedNext = pool.RentVectors(capacity);
        }
    }

    /// <summary>Number of recorded instants.</summary>
    public int Count { get; private set; }

    /// <summary>Whether <see cref="CompactedRauchTungStriebelSmoother.Smooth"/> has run on this segment.</summary>
    public bool IsSmoothed { get; internal set; }

    /// <summary>Recorded instants, Unix microseconds, non-decreasing.</summary>
    public ReadOnlySpan<long> TimesUs => _times.AsSpan(0, Count);

    /// <summary>Approximate bytes held by the arrays.</summary>
    public long ApproximateBytes => (long)_times.Length * (8 + 80 + (2 * StateVector.Length * sizeof(double)) + (2 * StateMatrix.Length * sizeof(double)));

    internal long[] Times => _times;

    internal LocalTangentPlane[] Planes => _planes;

    /// <summary>Before smoothing: μ(k) = E[x(k) | data up to the prediction into k + 1]; the last one is x(K|K).</summary>
    internal StateVector[] Means => _means;

    /// <summary>Before smoothing: D(k) = Π(k) - G(k) P(k+1|·) G(k)ᵀ; the last one is P(K|K).</summary>
    internal StateMatrix[] Covariances => _covariances;

    /// <summary>Equivalent smoother gains G(k) linking instant k to k + 1 (the last one is zero).</summary>
    internal StateMatrix[] Gains => _gains;

    /// <summary>Prediction x(k+1|·) into instant k + 1 used in the link from k.</summary>
    internal StateVector[] PredictedNext => _predictedNext;

    /// <summary>Overwrites the time and plane of instant <paramref name="index"/>.</summary>
    internal void Replace(int index, long timeUs, in LocalTangentPlane plane)
    {
        _times[index] = timeUs;
        _planes[index] = plane;
    }

    /// <summary>Appends an instant and returns its index.</summary>
    internal int Add(long timeUs, in LocalTangentPlane plane)
    {
        if (Count == _times.Length)
        {
            Grow(_times.Length * 2);
        }

        _times[Count] = timeUs;
        _planes[Count] = plane;
        return Count++;
    }

    /// <summary>
    /// Appends <paramref name="next"/>, the forward pass that continued from this segment's last state (a replay of the
    /// same track split at a stored checkpoint): its first instant is that state, so it replaces this segment's last
    /// one, whose link is already closed towards it. <paramref name="next"/> is empty afterwards (its pooled arrays go back).
    /// </summary>
    /// <exception cref="ArgumentException"><paramref name="next"/> does not start at this segment's last instant, or either is smoothed.</exception>
    public void AppendContinuation(CompactedSegment next)
    {
        ArgumentNullException.ThrowIfNull(next);
        if (IsSmoothed || next.IsSmoothed)
        {
            throw new ArgumentException("only segments not yet smoothed can be joined", nameof(next));
        }

        if (next.Count == 0)
        {
            return;
        }

        if (Count == 0 || _times[Count - 1] != next._times[0])
        {
            throw new ArgumentException("the continuation must start at this segment's last instant", nameof(next));
        }

        int at = Count - 1;
        int length = at + next.Count;
        if (length > _times.Length)
        {
            Grow(Math.Max(length, _times.Length * 2));
        }

        next._times.AsSpan(0, next.Count).CopyTo(_times.AsSpan(at));
        next._planes.AsSpan(0, next.Count).CopyTo(_planes.AsSpan(at));
        next._means.AsSpan(0, next.Count).CopyTo(_means.AsSpan(at));
        next._covariances.AsSpan(0, next.Count).CopyTo(_covariances.AsSpan(at));
        next._gains.AsSpan(0, next.Count).CopyTo(_gains.AsSpan(at));
        next._predictedNext.AsSpan(0, next.Count).CopyTo(_predictedNext.AsSpan(at));
        Count = length;
        next.Release();
    }

    /// <summary>
    /// The smoothed states as a <see cref="SmoothedSegment"/>, sharing the arrays (not copied). Without a pool they are
    /// trimmed to <see cref="Count"/> first when less than half of them is used, so that room made up front for a long
    /// window the data did not fill is not held on to; pooled ones go back whole when the smoothed segment is disposed.
    /// The prediction array, needed only by the smoother, is released.
    /// </summary>
    /// <exception cref="InvalidOperationException">The segment has not been smoothed.</exception>
    public SmoothedSegment ToSmoothedSegment()
    {
        if (!IsSmoothed)
        {
            throw new InvalidOperationException("smooth the segment first");
        }

        if (_pool is null && Count < _times.Length / 2)
        {
            Array.Resize(ref _times, Count);
            Array.Resize(ref _planes, Count);
            Array.Resize(ref _means, Count);
            Array.Resize(ref _covariances, Count);
            Array.Resize(ref _gains, Count);
        }

        _pool?.Return(_predictedNext);
        _predictedNext = [];
        return new SmoothedSegment(_times, _planes, _means, _covariances, _gains, Count, _pool);
    }

    /// <summary>Empties the segment and gives pooled arrays back.</summary>
    private void Release()
    {
        Count = 0;
        if (_pool is { } pool)
        {
            pool.Return(_times, _planes, _means, _covariances, _gains);
            pool.Return(_predictedNext);
        }

        _times = [];
        _planes = [];
        _means = [];
        _covariances = [];
        _gains = [];
        _predictedNext = [];
    }

    private void Grow(int size)
    {
        if (_pool is null)
        {
            Array.Resize(ref _times, size);
            Array.Resize(ref _planes, size);
            Array.Resize(ref _means, size);
            Array.Resize(ref _covariances, size);
            Array.Resize(ref _gains, size);
            Array.Resize(ref _predictedNext, size);
            return;
        }

        _times = Moved(_times, _pool.RentTimes(size), _pool.Return);
        _planes = Moved(_planes, _pool.RentPlanes(size), _pool.Return);
        _means = Moved(_means, _pool.RentVectors(size), _pool.Return);
        _covariances = Moved(_covariances, _pool.RentMatrices(size), _pool.Return);
        _gains = Moved(_gains, _pool.RentMatrices(size), _pool.Return);
        _predictedNext = Moved(_predictedNext, _pool.RentVectors(size), _pool.Return);
    }

    /// <summary>Copies the first <see cref="Count"/> elements of <paramref name="from"/> into <paramref name="to"/> and gives <paramref name="from"/> back.</summary>
    private T[] Moved<T>(T[] from, T[] to, Action<T[]> giveBack)
    {
        from.AsSpan(0, Count).CopyTo(to);
        giveBack(from);
        return to;
    }
}
