using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// M ← M - U Vᵀ for an 8 x 8 row-major M and 8 x m factors U and V (m at most 3, row-major, element (i, a) at i * m + a):
/// the low-rank change a measurement update makes to a covariance or cross-covariance. Row i of M loses
/// Σ_a U(i, a) V(·, a), eight columns at a time, the terms subtracted in order of a.
/// </summary>
internal static class OuterProductUpdate
{
    private const int N = StateMatrix.Size;

    /// <summary>Largest rank handled.</summary>
    internal const int MaxRank = 3;

    /// <summary>M ← M - U Vᵀ.</summary>
    /// <param name="matrix">M, 64 elements, changed in place.</param>
    /// <param name="u">U, at least 8 m elements.</param>
    /// <param name="v">V, at least 8 m elements.</param>
    /// <param name="rank">m, 1 to <see cref="MaxRank"/>.</param>
    internal static void Subtract(Span<double> matrix, ReadOnlySpan<double> u, ReadOnlySpan<double> v, int rank)
    {
        if (rank is < 1 or > MaxRank || matrix.Length < StateMatrix.Length || u.Length < N * rank || v.Length < N * rank)
        {
            throw new ArgumentException($"8 x 8 matrix and 8 x {rank} factors expected (rank 1 to {MaxRank})");
        }

        // Column a of V as two vectors of four.
        Span<Vector256<double>> columns = stackalloc Vector256<double>[2 * MaxRank];
        for (int a = 0; a < rank; a++)
        {
            columns[2 * a] = Vector256.Create(v[a], v[rank + a], v[(2 * rank) + a], v[(3 * rank) + a]);
            columns[(2 * a) + 1] = Vector256.Create(v[(4 * rank) + a], v[(5 * rank) + a], v[(6 * rank) + a], v[(7 * rank) + a]);
        }

        ref double m0 = ref MemoryMarshal.GetReference(matrix);
        for (int i = 0; i < N; i++)
        {
            var lo = Vector256.LoadUnsafe(ref m0, (nuint)(i * N));
            var hi = Vector256.LoadUnsafe(ref m0, (nuint)((i * N) + 4));
            for (int a = 0; a < rank; a++)
            {
                var uia = Vector256.Create(u[(i * rank) + a]);
                lo -= uia * columns[2 * a];
                hi -= uia * columns[(2 * a) + 1];
            }

            lo.StoreUnsafe(ref m0, (nuint)(i * N));
            hi.StoreUnsafe(ref m0, (nuint)((i * N) + 4));
        }
    }
}
