using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// R ← A Fᵀ for a transition F whose rows 4 and on hold only their diagonal element (the motion model carries yaw rate,
/// acceleration, bias and scale over, and the GNSS error states decay by their Gauss-Markov factor): column j ≥ 4 of the
/// result is F(j, j) times column j of A, and only columns 0 to 3 are summed, each element over l in ascending order,
/// Σ_l A(i, l) F(0..3, l), leaving out the l whose F(0..3, l) is all zero. Row by row, so R may be A itself.
/// </summary>
internal static class CarriedOverTransitionProduct
{
    private const int N = StateMatrix.Size;

    /// <summary>First row of F that holds only its diagonal element.</summary>
    private const int FirstDiagonalRow = 4;

    /// <summary>Whether rows 4 and on of <paramref name="f"/> hold only their diagonal element, as <see cref="Multiply"/> assumes.</summary>
    /// <remarks>
    /// Four (and two) elements compared at a time, the diagonal one replaced by zero first (selected by comparing the lanes'
    /// column numbers with the row's, so there is no branch); a NaN compares unequal to zero and -0 equal, as in an
    /// element-by-element test.
    /// </remarks>
    internal static bool Applies(in StateMatrix f)
    {
        ReadOnlySpan<double> fS = f;
        ref double f0 = ref MemoryMarshal.GetReference(fS);
        var middleColumns = Vector256.Create(4.0, 5.0, 6.0, 7.0);
        var highColumns = Vector128.Create(8.0, 9.0);
        bool carriedOver = true;
        for (int i = FirstDiagonalRow; i < N; i++)
        {
            int row = i * N;
            var low = Vector256.LoadUnsafe(ref f0, (nuint)row);
            var middle = Vector256.ConditionalSelect(
                Vector256.Equals(middleColumns, Vector256.Create((double)i)), Vector256<double>.Zero, Vector256.LoadUnsafe(ref f0, (nuint)(row + 4)));
            var high = Vector128.ConditionalSelect(
                Vector128.Equals(highColumns, Vector128.Create((double)i)), Vector128<double>.Zero, Vector128.LoadUnsafe(ref f0, (nuint)(row + 8)));
            carriedOver &= low == Vector256<double>.Zero && middle == Vector256<double>.Zero && high == Vector128<double>.Zero;
        }

        return carriedOver;
    }

    /// <summary>R ← A Fᵀ, F's rows 4 and on taken as diagonal (not checked; see <see cref="Applies"/>).</summary>
    /// <param name="a">A, n² elements row-major.</param>
    /// <param name="f">F.</param>
    /// <param name="result">R, n² elements; may be <paramref name="a"/>.</param>
    internal static void Multiply(ReadOnlySpan<double> a, in StateMatrix f, Span<double> result)
    {
        if (a.Length < StateMatrix.Length || result.Length < StateMatrix.Length)
        {
            throw new ArgumentException($"{N} x {N} matrices expected");
        }

        // Column l of F's first four rows, kept only where it is not all zero (the prediction's F has six such columns of
        // ten): a zero column adds only zeros to a sum that starts at +0 and so cannot change it, and leaving it out keeps
        // every element's remaining terms in ascending order of l, so the result is the same to the last bit as the full
        // sum for finite A. F's diagonal from row 4 on (ones before it, so the row product leaves those columns alone).
        ReadOnlySpan<double> fS = f;
        Span<Vector256<double>> fColumns = stackalloc Vector256<double>[N];
        Span<int> columnIndex = stackalloc int[N];
        int columnCount = 0;
        for (int l = 0; l < N; l++)
        {
            var column = Vector256.Create(fS[l], fS[N + l], fS[(2 * N) + l], fS[(3 * N) + l]);
            if (column != Vector256<double>.Zero)
            {
                fColumns[columnCount] = column;
                columnIndex[columnCount++] = l;
            }
        }

        Span<double> diagonal = stackalloc double[N];
        for (int j = 0; j < N; j++)
        {
            diagonal[j] = j < FirstDiagonalRow ? 1.0 : fS[(j * N) + j];
        }

        var scale = StateRow.Load(ref MemoryMarshal.GetReference(diagonal), 0);
        ref double ar = ref MemoryMarshal.GetReference(a);
        ref double rr = ref MemoryMarshal.GetReference(result);
        for (int i = 0; i < N; i++)
        {
            var lo = Vector256<double>.Zero;
            for (int c = 0; c < columnCount; c++)
            {
                lo += Vector256.Create(a[(i * N) + columnIndex[c]]) * fColumns[c];
            }

            // Columns 0-3 of the scaled row are overwritten by the sums just formed.
            (StateRow.Load(ref ar, i * N) * scale).Store(ref rr, i * N);
            lo.StoreUnsafe(ref rr, (nuint)(i * N));
        }
    }
}
