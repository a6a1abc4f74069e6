using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Smoothing;

/// <summary>The smoothed states of one continuous segment of a track, with the smoother gains that link them.</summary>
/// <remarks>
/// The arrays may be longer than <see cref="Count"/> (a recorder makes room up front); the properties show the first
/// <see cref="Count"/> elements only, so nothing is copied to trim them. A segment whose arrays came from a
/// <see cref="SegmentArrayPool"/> gives them back on <see cref="Dispose"/> and is empty afterwards; dispose it only when
/// nothing reads it any more (spans taken before stay pointed at arrays another replay may then fill).
/// </remarks>
public sealed class SmoothedSegment : IDisposable
{
    private long[] _timesUs;
    private LocalTangentPlane[] _planes;
    private StateVector[] _means;
    private StateMatrix[] _covariances;
    private StateMatrix[] _gains;
    private SegmentArrayPool? _pool;

    internal SmoothedSegment(long[] timesUs, LocalTangentPlane[] planes, StateVector[] means, StateMatrix[] covariances, StateMatrix[] gains)
        : this(timesUs, planes, means, covariances, gains, timesUs.Length)
    {
    }

    internal SmoothedSegment(
        long[] timesUs, LocalTangentPlane[] planes, StateVector[] means, StateMatrix[] covariances, StateMatrix[] gains, int count, SegmentArrayPool? pool = null)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(count);
        if (count > timesUs.Length || count > planes.Length || count > means.Length || count > covariances.Length || count > gains.Length)
        {
            throw new ArgumentOutOfRangeException(nameof(count), count, "more steps than the arrays hold");
        }

        _timesUs = timesUs;
        _planes = planes;
        _means = means;
        _covariances = covariances;
        _gains = gains;
        _pool = pool;
        Count = count;
    }

    /// <summary>Step times, Unix microseconds, non-decreasing.</summary>
    public ReadOnlySpan<long> TimesUs => _timesUs.AsSpan(0, Count);

    /// <summary>Local plane of each step's position components.</summary>
    public ReadOnlySpan<LocalTangentPlane> Planes => _planes.AsSpan(0, Count);

    /// <summary>Smoothed means x(k|N).</summary>
    public ReadOnlySpan<StateVector> Means => _means.AsSpan(0, Count);

    /// <summary>Smoothed covariances P(k|N).</summary>
    public ReadOnlySpan<StateMatrix> Covariances => _covariances.AsSpan(0, Count);

    /// <summary>Smoother gains C(k) linking step k to step k + 1 (the last one is zero); Cov(x_k, x_k+1 | N) = C(k) P(k+1|N).</summary>
    public ReadOnlySpan<StateMatrix> Gains => _gains.AsSpan(0, Count);

    /// <summary>Number of steps (0 once disposed).</summary>
    public int Count { get; private set; }

    /// <summary>Gives pooled arrays back to their pool and empties the segment; does nothing for unpooled ones.</summary>
    public void Dispose()
    {
        if (_pool is not { } pool)
        {
            return;
        }

        _pool = null;
        Count = 0;
        pool.Return(_timesUs, _planes, _means, _covariances, _gains);
        _timesUs = [];
        _planes = [];
        _means = [];
        _covariances = [];
        _gains = [];
    }
}
