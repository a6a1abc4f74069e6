using System.Buffers;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Smoothing;

/// <summary>
/// Arrays for <see cref="CompactedSegment"/>s, kept between replays: a vehicle-day holds about 36 MB of them, and fresh
/// arrays of that size cost the process a page fault per 4 KiB and the collector a clearing pass on every request.
/// A segment made with a pool hands its arrays back when its <see cref="SmoothedSegment"/> is disposed.
/// </summary>
/// <remarks>
/// Thread-safe (the buckets are <see cref="ArrayPool{T}.Create(int, int)"/> pools, which lock; no per-thread caches, so an
/// array given back on one thread is found by a replay on another). Rented arrays are not cleared: a segment writes
/// every element it shows before it is read.
/// </remarks>
public sealed class SegmentArrayPool
{
    private readonly ArrayPool<long> _times;
    private readonly ArrayPool<LocalTangentPlane> _planes;
    private readonly ArrayPool<StateVector> _vectors;
    private readonly ArrayPool<StateMatrix> _matrices;

    /// <summary>Creates a pool.</summary>
    /// <param name="maxInstants">Longest array kept, in instants; longer ones are made and dropped as without a pool.</param>
    /// <param name="segmentsKept">Arrays kept per size class and kind (about the number of replays at once).</param>
    public SegmentArrayPool(int maxInstants = 1 << 15, int segmentsKept = 4)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(maxInstants, 16);
        ArgumentOutOfRangeException.ThrowIfLessThan(segmentsKept, 1);
        _times = ArrayPool<long>.Create(maxInstants, segmentsKept);
        _planes = ArrayPool<LocalTangentPlane>.Create(maxInstants, segmentsKept);

        // Means and predictions (two per segment), covariances and gains (two per segment).
        _vectors = ArrayPool<StateVector>.Create(maxInstants, 2 * segmentsKept);
        _matrices = ArrayPool<StateMatrix>.Create(maxInstants, 2 * segmentsKept);
    }

    internal long[] RentTimes(int length) => _times.Rent(length);

    internal LocalTangentPlane[] RentPlanes(int length) => _planes.Rent(length);

    internal StateVector[] RentVectors(int length) => _vectors.Rent(length);

    internal StateMatrix[] RentMatrices(int length) => _matrices.Rent(length);

    /// <summary>Gives back the arrays a smoothed segment shows.</summary>
    internal void Return(long[] times, LocalTangentPlane[] planes, StateVector[] means, StateMatrix[] covariances, StateMatrix[] gains)
    {
        Return(times);
        Return(planes);
        Return(means);
        Return(covariances);
        Return(gains);
    }

    internal void Return(long[] array) => _times.Return(array);

    internal void Return(LocalTangentPlane[] array) => _planes.Return(array);

    internal void Return(StateVector[] array) => _vectors.Return(array);

    internal void Return(StateMatrix[] array) => _matrices.Return(array);
}
