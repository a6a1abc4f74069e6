using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// The products, transposes and checks on <see cref="StateMatrix"/> that the filter, the smoothers and the compacting
/// recorder share. Every product sums each element over l in ascending order from zero, without fused multiply-add, and
/// works a whole row at a time through <see cref="StateRow"/> (element-wise arithmetic only), so each element gets exactly
/// the scalar loop's operations in the scalar loop's order: results are the same to the last bit as the loops they replace.
/// </summary>
internal static class MatrixKernels
{
    private const int N = StateMatrix.Size;

    /// <summary>R ← A B (R must not be A or B).</summary>
    internal static void Multiply(ReadOnlySpan<double> a, ReadOnlySpan<double> b, Span<double> result)
    {
        RequireSquare(a.Length, b.Length, result.Length);
        ref double br = ref MemoryMarshal.GetReference(b);
        ref double rr = ref MemoryMarshal.GetReference(result);
        for (int i = 0; i < N; i++)
        {
            var row = StateRow.Zero;
            for (int l = 0; l < N; l++)
            {
                row += StateRow.Broadcast(a[(i * N) + l]) * StateRow.Load(ref br, l * N);
            }

            row.Store(ref rr, i * N);
        }
    }

    /// <summary>
    /// A B, leaving out the terms of zero elements of A (so a zero of A times a non-finite element of B adds nothing):
    /// for the sparse transitions and rotations of the prediction.
    /// </summary>
    internal static StateMatrix MultiplySkippingZeros(in StateMatrix a, in StateMatrix b)
    {
        StateMatrix c = default;
        ReadOnlySpan<double> bS = b;
        ref double br = ref MemoryMarshal.GetReference(bS);
        Span<double> cS = c;
        ref double cr = ref MemoryMarshal.GetReference(cS);
        for (int i = 0; i < N; i++)
        {
            var row = StateRow.Zero;
            for (int l = 0; l < N; l++)
            {
                double ail = a[(i * N) + l];
                if (ail == 0)
                {
                    continue;
                }

                row += StateRow.Broadcast(ail) * StateRow.Load(ref br, l * N);
            }

            row.Store(ref cr, i * N);
        }

        return c;
    }

    /// <summary>R ← A Bᵀ (R must not be A or B).</summary>
    internal static void MultiplyByTransposed(in StateMatrix a, in StateMatrix b, ref StateMatrix result)
    {
        StateMatrix bT = default;
        Transpose(b, ref bT);
        Multiply(a, bT, result);
    }

    /// <summary>T ← T + A Bᵀ, the product summed first and then added (T must not be A or B).</summary>
    internal static void AddMultiplyByTransposed(ref StateMatrix target, in StateMatrix a, in StateMatrix b)
    {
        StateMatrix product = default;
        MultiplyByTransposed(a, b, ref product);
        Span<double> t = target;
        ref double tr = ref MemoryMarshal.GetReference(t);
        ReadOnlySpan<double> p = product;
        ref double pr = ref MemoryMarshal.GetReference(p);
        for (int i = 0; i < N; i++)
        {
            (StateRow.Load(ref tr, i * N) + StateRow.Load(ref pr, i * N)).Store(ref tr, i * N);
        }
    }

    /// <summary>
    /// R ← A Fᵀ for a transition F: by <see cref="CarriedOverTransitionProduct"/> when F's rows 4 and on hold only their
    /// diagonal element, else densely (R must not be A or F).
    /// </summary>
    internal static void MultiplyByTransposedTransition(in StateMatrix a, in StateMatrix f, ref StateMatrix result)
    {
        if (CarriedOverTransitionProduct.Applies(f))
        {
            CarriedOverTransitionProduct.Multiply(a, f, result);
            return;
        }

        MultiplyByTransposed(a, f, ref result);
    }

    /// <summary>x ← x + A v, each element's dot product summed over j in ascending order from zero before it is added.</summary>
    internal static void AddMultiply(ref StateVector x, in StateMatrix a, ReadOnlySpan<double> v)
    {
        for (int i = 0; i < N; i++)
        {
            double sum = 0;
            for (int j = 0; j < N; j++)
            {
                sum += a[(i * N) + j] * v[j];
            }

            x[i] += sum;
        }
    }

    /// <summary>R ← Aᵀ (R must not be A).</summary>
    internal static void Transpose(in StateMatrix a, ref StateMatrix result)
    {
        for (int i = 0; i < N; i++)
        {
            for (int j = 0; j < N; j++)
            {
                result[(j * N) + i] = a[(i * N) + j];
            }
        }
    }

    /// <summary>Replaces P by (P + Pᵀ) / 2.</summary>
    internal static void Symmetrize(ref StateMatrix covariance)
    {
        Span<double> p = covariance;
        ref double p0 = ref MemoryMarshal.GetReference(p);
        for (int i = 0; i < N; i++)
        {
            for (int j = i + 1; j < N; j++)
            {
                ref double upper = ref Unsafe.Add(ref p0, (i * N) + j);
                ref double lower = ref Unsafe.Add(ref p0, (j * N) + i);
                double mean = 0.5 * (upper + lower);
                upper = mean;
                lower = mean;
            }
        }
    }

    /// <summary>
    /// Whether a symmetric matrix is positive definite and finite: symmetric Gaussian elimination without pivoting (the
    /// LDLᵀ factorisation) meets only positive, finite pivots exactly when it is (Golub and Van Loan, <i>Matrix
    /// Computations</i>, 4th ed., section 4.2; from memory). Rows are eliminated a whole row at a time; the factor is
    /// not kept, so this is the divergence guard's test, not a solver.
    /// </summary>
    internal static bool IsPositiveDefinite(in StateMatrix matrix)
    {
        Span<double> a = stackalloc double[StateMatrix.Length];
        ((ReadOnlySpan<double>)matrix).CopyTo(a);
        ref double a0 = ref MemoryMarshal.GetReference(a);
        for (int j = 0; j < N; j++)
        {
            double pivot = a[(j * N) + j];
            if (!(pivot > 0) || !double.IsFinite(pivot))
            {
                return false;
            }

            var pivotRow = StateRow.Load(ref a0, j * N);
            double inverse = 1.0 / pivot;
            for (int i = j + 1; i < N; i++)
            {
                (StateRow.Load(ref a0, i * N) - (StateRow.Broadcast(a[(i * N) + j] * inverse) * pivotRow)).Store(ref a0, i * N);
            }
        }

        return true;
    }

    /// <summary>Bitwise equality, compared as bytes (vectorised) rather than element by element.</summary>
    internal static bool SameBits(in StateVector a, in StateVector b) =>
        MemoryMarshal.AsBytes((ReadOnlySpan<double>)a).SequenceEqual(MemoryMarshal.AsBytes((ReadOnlySpan<double>)b));

    /// <summary>Bitwise equality, compared as bytes (vectorised) rather than element by element.</summary>
    internal static bool SameBits(in StateMatrix a, in StateMatrix b) =>
        MemoryMarshal.AsBytes((ReadOnlySpan<double>)a).SequenceEqual(MemoryMarshal.AsBytes((ReadOnlySpan<double>)b));

    private static void RequireSquare(int a, int b, int result)
    {
        if (a < StateMatrix.Length || b < StateMatrix.Length || result < StateMatrix.Length)
        {
            throw new ArgumentException($"{N} x {N} matrices expected");
        }
    }
}
