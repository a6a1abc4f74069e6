using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Smoothing;

/// <summary>The smoothed states of one continuous segment of a track, with the smoother gains that link them.</summary>
public sealed class SmoothedSegment
{
    internal SmoothedSegment(long[] timesUs, LocalTangentPlane[] planes, Vector8[] means, Matrix8[] covariances, Matrix8[] gains)
    {
        TimesUs = timesUs;
        Planes = planes;
        Means = means;
        Covariances = covariances;
        Gains = gains;
    }

    /// <summary>Step times, Unix microseconds, non-decreasing.</summary>
    public long[] TimesUs { get; }

    /// <summary>Local plane of each step's position components.</summary>
    public LocalTangentPlane[] Planes { get; }

    /// <summary>Smoothed means x(k|N).</summary>
    public Vector8[] Means { get; }

    /// <summary>Smoothed covariances P(k|N).</summary>
    public Matrix8[] Covariances { get; }

    /// <summary>Smoother gains C(k) linking step k to step k + 1 (the last one is zero); Cov(x_k, x_k+1 | N) = C(k) P(k+1|N).</summary>
    public Matrix8[] Gains { get; }

    /// <summary>Number of steps.</summary>
    public int Count => TimesUs.Length;
}
