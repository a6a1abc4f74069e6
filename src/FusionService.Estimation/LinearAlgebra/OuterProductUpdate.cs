using System.Runtime.InteropServices;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// M ← M - U Vᵀ for an n x n row-major M (n = <see cref="StateMatrix.Size"/>) and n x m factors U and V (m at most 3,
/// row-major, element (i, a) at i * m + a): the low-rank change a measurement update makes to a covariance or
/// cross-covariance. Row i of M loses Σ_a U(i, a) V(·, a), a whole row at a time, the terms subtracted in order of a.
/// </summary>
internal static class OuterProductUpdate
{
    private const int N = StateMatrix.Size;

    /// <summary>Largest rank handled.</summary>
    internal const int MaxRank = 3;

    /// <summary>M ← M - U Vᵀ.</summary>
    /// <param name="matrix">M, n² elements, changed in place.</param>
    /// <param name="u">U, at least n m elements.</param>
    /// <param name="v">V, at least n m elements.</param>
    /// <param name="rank">m, 1 to <see cref="MaxRank"/>.</param>
    internal static void Subtract(Span<double> matrix, ReadOnlySpan<double> u, ReadOnlySpan<double> v, int rank)
    {
        if (rank is < 1 or > MaxRank || matrix.Length < StateMatrix.Length || u.Length < N * rank || v.Length < N * rank)
        {
            throw new ArgumentException($"{N} x {N} matrix and {N} x {rank} factors expected (rank 1 to {MaxRank})");
        }

        Span<StateRow> columns = stackalloc StateRow[MaxRank];
        for (int a = 0; a < rank; a++)
        {
            columns[a] = StateRow.Gather(v, a, rank);
        }

        ref double m0 = ref MemoryMarshal.GetReference(matrix);
        for (int i = 0; i < N; i++)
        {
            var row = StateRow.Load(ref m0, i * N);
            for (int a = 0; a < rank; a++)
            {
                row -= StateRow.Broadcast(u[(i * rank) + a]) * columns[a];
            }

            row.Store(ref m0, i * N);
        }
    }
}
