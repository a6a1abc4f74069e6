using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// Cholesky factorisation S = L Lᵀ of a small symmetric positive definite matrix (row-major, n x n) and the triangular
/// solves built on it: the filter's innovation covariance (n at most 3) and the smoothers' predicted covariances
/// (n = <see cref="StateMatrix.Size"/>). Golub and Van Loan, <i>Matrix Computations</i>, 4th ed., section 4.2 (from memory).
/// </summary>
internal static class Cholesky
{
    private const int N = StateMatrix.Size;

    /// <summary>Lower Cholesky factor in place (row-major, upper part left as is); false if not positive definite or not finite.</summary>
    /// <remarks>Indexes through a reference after one length check: this runs after every update, as the divergence guard.</remarks>
    internal static bool FactorInPlace(Span<double> a, int n)
    {
        if (a.Length < n * n)
        {
            throw new ArgumentException($"{n} x {n} matrix expected, {a.Length} elements given", nameof(a));
        }

        ref double a0 = ref MemoryMarshal.GetReference(a);
        for (int j = 0; j < n; j++)
        {
            ref double rowJ = ref Unsafe.Add(ref a0, j * n);
            double d = Unsafe.Add(ref rowJ, j);
            for (int k = 0; k < j; k++)
            {
                double l = Unsafe.Add(ref rowJ, k);
                d -= l * l;
            }

            if (!(d > 0) || !double.IsFinite(d))
            {
                return false;
            }

            double diagonal = Math.Sqrt(d);
            Unsafe.Add(ref rowJ, j) = diagonal;
            for (int i = j + 1; i < n; i++)
            {
                ref double rowI = ref Unsafe.Add(ref a0, i * n);
                double s = Unsafe.Add(ref rowI, j);
                for (int k = 0; k < j; k++)
                {
                    s -= Unsafe.Add(ref rowI, k) * Unsafe.Add(ref rowJ, k);
                }

                Unsafe.Add(ref rowI, j) = s / diagonal;
            }
        }

        return true;
    }

    /// <summary>Solves L y = b in place.</summary>
    internal static void ForwardSubstitute(ReadOnlySpan<double> l, int n, Span<double> b)
    {
        for (int i = 0; i < n; i++)
        {
            double s = b[i];
            for (int k = 0; k < i; k++)
            {
                s -= l[(i * n) + k] * b[k];
            }

            b[i] = s / l[(i * n) + i];
        }
    }

    /// <summary>Solves Lᵀ y = b in place.</summary>
    internal static void BackSubstitute(ReadOnlySpan<double> l, int n, Span<double> b)
    {
        for (int i = n - 1; i >= 0; i--)
        {
            double s = b[i];
            for (int k = i + 1; k < n; k++)
            {
                s -= l[(k * n) + i] * b[k];
            }

            b[i] = s / l[(i * n) + i];
        }
    }

    /// <summary>
    /// L⁻¹ (lower triangular, m x m, m at most 3) by forward substitution on the unit vectors; the upper part of
    /// <paramref name="inverse"/> is cleared.
    /// </summary>
    internal static void InvertLower(ReadOnlySpan<double> l, int m, Span<double> inverse)
    {
        inverse.Clear();
        Span<double> unit = stackalloc double[3];
        for (int c = 0; c < m; c++)
        {
            unit.Clear();
            unit[c] = 1.0;
            ForwardSubstitute(l, m, unit[..m]);
            for (int a = c; a < m; a++)
            {
                inverse[(a * m) + c] = unit[a];
            }
        }
    }

    /// <summary>
    /// X ← P⁻¹ X for the n x n <paramref name="x"/> (n = <see cref="StateMatrix.Size"/>), P given by its Cholesky factor
    /// <paramref name="l"/>: forward and back substitution on whole rows of X at once, the same operations in the same
    /// order as <see cref="ForwardSubstitute"/> and <see cref="BackSubstitute"/> on each column, so the result is the same
    /// to the last bit.
    /// </summary>
    internal static void SolveInPlace(ReadOnlySpan<double> l, ref StateMatrix x)
    {
        Span<double> t = x;
        ref double tr = ref MemoryMarshal.GetReference(t);
        for (int c = 0; c < N; c++)
        {
            var row = StateRow.Load(ref tr, c * N);
            for (int k = 0; k < c; k++)
            {
                row -= StateRow.Broadcast(l[(c * N) + k]) * StateRow.Load(ref tr, k * N);
            }

            (row / StateRow.Broadcast(l[(c * N) + c])).Store(ref tr, c * N);
        }

        for (int c = N - 1; c >= 0; c--)
        {
            var row = StateRow.Load(ref tr, c * N);
            for (int k = c + 1; k < N; k++)
            {
                row -= StateRow.Broadcast(l[(k * N) + c]) * StateRow.Load(ref tr, k * N);
            }

            (row / StateRow.Broadcast(l[(c * N) + c])).Store(ref tr, c * N);
        }
    }
}
