using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// R ← A Fᵀ for a transition F whose rows 4 and on hold only their diagonal element (the motion model carries yaw rate,
/// acceleration, bias and scale over, and the GNSS error states decay by their Gauss-Markov factor): column j ≥ 4 of the
/// result is F(j, j) times column j of A, and only columns 0 to 3 are summed, each element over l in ascending order,
/// Σ_l A(i, l) F(0..3, l). Row by row, so R may be A itself.
/// </summary>
internal static class CarriedOverTransitionProduct
{
    private const int N = StateMatrix.Size;

    /// <summary>First row of F that holds only its diagonal element.</summary>
    private const int FirstDiagonalRow = 4;

    /// <summary>Whether rows 4 and on of <paramref name="f"/> hold only their diagonal element, as <see cref="Multiply"/> assumes.</summary>
    internal static bool Applies(in StateMatrix f)
    {
        ReadOnlySpan<double> fS = f;
        for (int i = FirstDiagonalRow; i < N; i++)
        {
            for (int j = 0; j < N; j++)
            {
                if (i != j && fS[(i * N) + j] != 0.0)
                {
                    return false;
                }
            }
        }

        return true;
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

        // Column l of F's first four rows, and F's diagonal from row 4 on (ones before it, so the row product leaves those columns alone).
        ReadOnlySpan<double> fS = f;
        Span<Vector256<double>> fColumns = stackalloc Vector256<double>[N];
        for (int l = 0; l < N; l++)
        {
            fColumns[l] = Vector256.Create(fS[l], fS[N + l], fS[(2 * N) + l], fS[(3 * N) + l]);
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
            for (int l = 0; l < N; l++)
            {
                lo += Vector256.Create(a[(i * N) + l]) * fColumns[l];
            }

            // Columns 0-3 of the scaled row are overwritten by the sums just formed.
            (StateRow.Load(ref ar, i * N) * scale).Store(ref rr, i * N);
            lo.StoreUnsafe(ref rr, (nuint)(i * N));
        }
    }
}
