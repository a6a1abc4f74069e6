using System.Runtime.CompilerServices;
using System.Runtime.Intrinsics;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// One row of a <see cref="StateMatrix"/> (ten doubles) held in registers as two vectors of four and one of two, so that
/// the covariance kernels work on whole rows. Element-wise operations only: each element gets exactly the scalar
/// arithmetic it would get in a loop, so results do not depend on the vector width.
/// </summary>
internal readonly struct StateRow
{
    private readonly Vector256<double> _low;
    private readonly Vector256<double> _middle;
    private readonly Vector128<double> _high;

    // Fails to compile (division by a constant zero) unless the state has exactly the ten elements a row holds. A static
    // constructor would do the same check at run time but costs a class-initialisation check on every use.
    private const int RowHoldsTheState = 1 / (StateMatrix.Size == 10 ? 1 : 0);

    private StateRow(Vector256<double> low, Vector256<double> middle, Vector128<double> high)
    {
        _low = low;
        _middle = middle;
        _high = high;
    }

    /// <summary>All zeros.</summary>
    internal static StateRow Zero => default;

    /// <summary>Every element <paramref name="value"/>.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    internal static StateRow Broadcast(double value) =>
        new(Vector256.Create(value), Vector256.Create(value), Vector128.Create(value));

    /// <summary>The ten elements from <paramref name="origin"/> + <paramref name="offset"/> on.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    internal static StateRow Load(ref double origin, int offset) => new(
        Vector256.LoadUnsafe(ref origin, (nuint)offset),
        Vector256.LoadUnsafe(ref origin, (nuint)(offset + 4)),
        Vector128.LoadUnsafe(ref origin, (nuint)(offset + 8)));

    /// <summary>Elements start, start + stride, ..., start + 9 stride of <paramref name="source"/> (a column of a row-major block).</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    internal static StateRow Gather(ReadOnlySpan<double> source, int start, int stride) => new(
        Vector256.Create(source[start], source[start + stride], source[start + (2 * stride)], source[start + (3 * stride)]),
        Vector256.Create(source[start + (4 * stride)], source[start + (5 * stride)], source[start + (6 * stride)], source[start + (7 * stride)]),
        Vector128.Create(source[start + (8 * stride)], source[start + (9 * stride)]));

    /// <summary>Writes the ten elements to <paramref name="origin"/> + <paramref name="offset"/> on.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    internal void Store(ref double origin, int offset)
    {
        _low.StoreUnsafe(ref origin, (nuint)offset);
        _middle.StoreUnsafe(ref origin, (nuint)(offset + 4));
        _high.StoreUnsafe(ref origin, (nuint)(offset + 8));
    }

    /// <summary>Σ_i a(i) b(i), summed as three partial vector sums.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    internal static double Dot(StateRow a, StateRow b) =>
        Vector256.Sum(a._low * b._low) + Vector256.Sum(a._middle * b._middle) + Vector128.Sum(a._high * b._high);

    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    public static StateRow operator +(StateRow a, StateRow b) => new(a._low + b._low, a._middle + b._middle, a._high + b._high);

    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    public static StateRow operator -(StateRow a, StateRow b) => new(a._low - b._low, a._middle - b._middle, a._high - b._high);

    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    public static StateRow operator *(StateRow a, StateRow b) => new(a._low * b._low, a._middle * b._middle, a._high * b._high);

    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    public static StateRow operator /(StateRow a, StateRow b) => new(a._low / b._low, a._middle / b._middle, a._high / b._high);
}
