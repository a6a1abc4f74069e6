using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Smoothing;

/// <summary>The smoothed states of one continuous segment of a track, with the smoother gains that link them.</summary>
/// <remarks>
/// The arrays may be longer than <see cref="Count"/> (a recorder makes room up front); the properties show the first
/// <see cref="Count"/> elements only, so nothing is copied to trim them.
/// </remarks>
public sealed class SmoothedSegment
{
    private readonly long[] _timesUs;
    private readonly LocalTangentPlane[] _planes;
    private readonly Vector8[] _means;
    private readonly Matrix8[] _covariances;
    private readonly Matrix8[] _gains;

    internal SmoothedSegment(long[] timesUs, LocalTangentPlane[] planes, Vector8[] means, Matrix8[] covariances, Matrix8[] gains)
        : this(timesUs, planes, means, covariances, gains, timesUs.Length)
    {
    }

    internal SmoothedSegment(long[] timesUs, LocalTangentPlane[] planes, Vector8[] means, Matrix8[] covariances, Matrix8[] gains, int count)
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
        Count = count;
    }

    /// <summary>Step times, Unix microseconds, non-decreasing.</summary>
    public ReadOnlySpan<long> TimesUs => _timesUs.AsSpan(0, Count);

    /// <summary>Local plane of each step's position components.</summary>
    public ReadOnlySpan<LocalTangentPlane> Planes => _planes.AsSpan(0, Count);

    /// <summary>Smoothed means x(k|N).</summary>
    public ReadOnlySpan<Vector8> Means => _means.AsSpan(0, Count);

    /// <summary>Smoothed covariances P(k|N).</summary>
    public ReadOnlySpan<Matrix8> Covariances => _covariances.AsSpan(0, Count);

    /// <summary>Smoother gains C(k) linking step k to step k + 1 (the last one is zero); Cov(x_k, x_k+1 | N) = C(k) P(k+1|N).</summary>
    public ReadOnlySpan<Matrix8> Gains => _gains.AsSpan(0, Count);

    /// <summary>Number of steps.</summary>
    public int Count { get; }
}
