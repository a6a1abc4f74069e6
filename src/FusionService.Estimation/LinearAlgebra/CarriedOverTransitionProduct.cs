using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// R ← A Fᵀ for a transition F whose rows 4 to 7 are rows of the identity (the motion model carries yaw rate,
/// acceleration, bias and scale over): columns 4 to 7 of the result are those of A, and only columns 0 to 3 are summed,
/// each element over l in ascending order, Σ_l A(i, l) F(0..3, l). Row by row, so R may be A itself.
/// </summary>
internal static class CarriedOverTransitionProduct
{
    private const int N = StateMatrix.Size;

    /// <summary>Whether rows 4 to 7 of <paramref name="f"/> are rows of the identity, as <see cref="Multiply"/> assumes.</summary>
    internal static bool Applies(in StateMatrix f)
    {
        ReadOnlySpan<double> fS = f;
        for (int i = 4; i < N; i++)
        {
            for (int j = 0; j < N; j++)
            {
                if (fS[(i * N) + j] != (i == j ? 1.0 : 0.0))
                {
                    return false;
                }
            }
        }

        return true;
    }

    /// <summary>R ← A Fᵀ, F's rows 4 to 7 taken as rows of the identity (not checked; see <see cref="Applies"/>).</summary>
    /// <param name="a">A, 64 elements row-major.</param>
    /// <param name="f">F.</param>
    /// <param name="result">R, 64 elements; may be <paramref name="a"/>.</param>
    internal static void Multiply(ReadOnlySpan<double> a, in StateMatrix f, Span<double> result)
    {
        if (a.Length < StateMatrix.Length || result.Length < StateMatrix.Length)
        {
            throw new ArgumentException("8 x 8 matrices expected");
        }

        // Column l of F's first four rows.
        ReadOnlySpan<double> fS = f;
        Span<Vector256<double>> fColumns = stackalloc Vector256<double>[N];
        for (int l = 0; l < N; l++)
        {
            fColumns[l] = Vector256.Create(fS[l], fS[N + l], fS[(2 * N) + l], fS[(3 * N) + l]);
        }

        ref double ar = ref MemoryMarshal.GetReference(a);
        ref double rr = ref MemoryMarshal.GetReference(result);
        for (int i = 0; i < N; i++)
        {
            var lo = Vector256<double>.Zero;
            for (int l = 0; l < N; l++)
            {
                lo += Vector256.Create(a[(i * N) + l]) * fColumns[l];
            }

            var hi = Vector256.LoadUnsafe(ref ar, (nuint)((i * N) + 4));
            lo.StoreUnsafe(ref rr, (nuint)(i * N));
            hi.StoreUnsafe(ref rr, (nuint)((i * N) + 4));
        }
    }
}
