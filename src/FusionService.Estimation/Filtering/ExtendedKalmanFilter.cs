using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Filtering;

/// <summary>
/// Allocation-free extended Kalman filter steps on the fixed-size vehicle state: covariance propagation and
/// the measurement update in Joseph form with a chi-square gate.
/// </summary>
/// <remarks>
/// Joseph form: P⁺ = (I - K H) P (I - K H)ᵀ + K R Kᵀ (Bucy and Joseph 1968; Bar-Shalom, Li and Kirubarajan 2001,
/// section 5.2; from memory), which stays symmetric positive semi-definite for any gain K even with round-off.
/// </remarks>
public static class ExtendedKalmanFilter
{
    /// <summary>Largest measurement dimension an update accepts.</summary>
    public const int MaxMeasurementDimension = 3;

    private const int N = StateMatrix.Size;

    /// <summary>
    /// P ← F P Fᵀ. When rows 4 and on of F hold only their diagonal element (true of every prediction step: yaw rate,
    /// acceleration, bias and scale are carried over and the GNSS error states decay by their Gauss-Markov factor) only
    /// rows and columns 0 to 3 are summed, which is most of the saving over a dense product; any other F (a re-anchoring's
    /// rotation) takes the dense product.
    /// </summary>
    public static void PropagateCovariance(ref StateMatrix covariance, in StateMatrix jacobian)
    {
        Span<double> p = covariance;
        ref double p0 = ref MemoryMarshal.GetReference(p);
        ReadOnlySpan<double> f = jacobian;
        if (!CarriedOverTransitionProduct.Applies(jacobian))
        {
            PropagateDense(ref covariance, jacobian);
            return;
        }

        // Rows 0-3 of F P computed into a scratch before they replace P's, a whole row at a time and each element summed
        // over j in ascending order; rows 4 and on of F P are P's scaled by F's diagonal. Then (F P) Fᵀ in place.
        Span<StateRow> top = stackalloc StateRow[4];
        for (int i = 0; i < 4; i++)
        {
            var row = StateRow.Zero;
            for (int j = 0; j < N; j++)
            {
                row += StateRow.Broadcast(f[(i * N) + j]) * StateRow.Load(ref p0, j * N);
            }

            top[i] = row;
        }

        for (int i = 4; i < N; i++)
        {
            double fii = f[(i * N) + i];
            if (fii != 1.0)
            {
                (StateRow.Broadcast(fii) * StateRow.Load(ref p0, i * N)).Store(ref p0, i * N);
            }
        }

        for (int i = 0; i < 4; i++)
        {
            top[i].Store(ref p0, i * N);
        }

        CarriedOverTransitionProduct.Multiply(p, jacobian, p);
        Symmetrize(ref covariance);
    }

    /// <summary>P ← F P Fᵀ by two dense products.</summary>
    private static void PropagateDense(ref StateMatrix covariance, in StateMatrix jacobian)
    {
        StateMatrix fp = default;
        for (int i = 0; i < N; i++)
        {
            for (int k = 0; k < N; k++)
            {
                double fik = jacobian[(i * N) + k];
                if (fik == 0)
                {
                    continue;
                }

                for (int j = 0; j < N; j++)
                {
                    fp[(i * N) + j] += fik * covariance[(k * N) + j];
                }
            }
        }

        for (int i = 0; i < N; i++)
        {
            for (int j = 0; j < N; j++)
            {
                double sum = 0;
                for (int k = 0; k < N; k++)
                {
                    sum += fp[(i * N) + k] * jacobian[(j * N) + k];
                }

                covariance[(i * N) + j] = sum;
            }
        }

        Symmetrize(ref covariance);
    }

    /// <summary>
    /// Gated measurement update in Joseph form. Computes the innovation covariance S = H P Hᵀ + R and the
    /// normalised innovation squared NIS = νᵀ S⁻¹ ν; when NIS exceeds <paramref name="gateThreshold"/> the state is
    /// left unchanged and false is returned.
    /// </summary>
    /// <param name="x">State, updated in place when accepted.</param>
    /// <param name="covariance">Covariance, updated in place when accepted.</param>
    /// <param name="residual">Innovation ν = z - h(x), length m (angles already wrapped).</param>
    /// <param name="h">Measurement Jacobian, m x n row-major (n = <see cref="StateMatrix.Size"/>).</param>
    /// <param name="r">Measurement noise covariance, m x m row-major, symmetric positive definite.</param>
    /// <param name="gateThreshold">NIS above which the measurement is rejected; +∞ disables the gate.</param>
    /// <param name="nis">Receives the NIS.</param>
    /// <returns>Whether the update was applied.</returns>
    /// <exception cref="FilterDivergenceException">S or the updated covariance is not positive definite or not finite.</exception>
    public static bool TryUpdateJoseph(
        ref StateVector x, ref StateMatrix covariance, ReadOnlySpan<double> residual, ReadOnlySpan<double> h,
        ReadOnlySpan<double> r, double gateThreshold, out double nis)
    {
        UpdateFactors unused = default;
        return TryUpdateJoseph(ref x, ref covariance, residual, h, r, gateThreshold, out nis, ref unused, captureFactors: false);
    }

    /// <summary>
    /// <see cref="TryUpdateJoseph(ref StateVector, ref StateMatrix, ReadOnlySpan{double}, ReadOnlySpan{double}, ReadOnlySpan{double}, double, out double)"/>
    /// that also hands out the update's <see cref="UpdateFactors"/> when it is applied and <paramref name="captureFactors"/> is set.
    /// <see cref="UpdateFactors.Dimension"/> and <see cref="UpdateFactors.Whitened"/> (w = L⁻¹ ν, the innovation in units of
    /// its own standard deviation) are written whenever the NIS is formed, gated or not.
    /// </summary>
    public static bool TryUpdateJoseph(
        ref StateVector x, ref StateMatrix covariance, ReadOnlySpan<double> residual, ReadOnlySpan<double> h,
        ReadOnlySpan<double> r, double gateThreshold, out double nis, ref UpdateFactors factors, bool captureFactors)
    {
        int m = residual.Length;
        if (m < 1 || m > MaxMeasurementDimension || h.Length != m * N || r.Length != m * m)
        {
            throw new ArgumentException($"inconsistent measurement dimensions: residual {m}, H {h.Length}, R {r.Length}");
        }

        // H has one or two non-zero entries per row here; the products below run over those only.
        Span<int> nonZero = stackalloc int[N * MaxMeasurementDimension];
        Span<int> nonZeroCount = stackalloc int[MaxMeasurementDimension];
        for (int row = 0; row < m; row++)
        {
            int count = 0;
            for (int j = 0; j < N; j++)
            {
                if (h[(row * N) + j] != 0)
                {
                    nonZero[(row * N) + count++] = j;
                }
            }

            nonZeroCount[row] = count;
        }

        Span<double> p = covariance;
        Span<double> pht = stackalloc double[N * MaxMeasurementDimension];
        for (int i = 0; i < N; i++)
        {
            for (int row = 0; row < m; row++)
            {
                double sum = 0;
                for (int t = 0; t < nonZeroCount[row]; t++)
                {
                    int j = nonZero[(row * N) + t];
                    sum += p[(i * N) + j] * h[(row * N) + j];
                }

                pht[(i * m) + row] = sum;
            }
        }

        Span<double> chol = stackalloc double[MaxMeasurementDimension * MaxMeasurementDimension];
        for (int a = 0; a < m; a++)
        {
            for (int b = 0; b < m; b++)
            {
                double sum = r[(a * m) + b];
                for (int t = 0; t < nonZeroCount[a]; t++)
                {
                    int i = nonZero[(a * N) + t];
                    sum += h[(a * N) + i] * pht[(i * m) + b];
                }

                chol[(a * m) + b] = sum;
            }
        }

        if (!CholeskyInPlace(chol[..(m * m)], m))
        {
            throw new FilterDivergenceException("innovation covariance S = H P Hᵀ + R is not positive definite");
        }

        Span<double> w = stackalloc double[MaxMeasurementDimension];
        residual.CopyTo(w);
        ForwardSubstitute(chol, m, w[..m]);
        nis = 0;
        factors.Dimension = m;
        for (int a = 0; a < m; a++)
        {
            nis += w[a] * w[a];
            factors.Whitened[a] = w[a];
        }

        if (!double.IsFinite(nis))
        {
            throw new FilterDivergenceException("normalised innovation squared is not finite");
        }

        if (nis > gateThreshold)
        {
            return false;
        }

        // L⁻¹ (lower triangular, m x m) once; then B = P Hᵀ L⁻ᵀ, K = P Hᵀ S⁻¹ = B L⁻¹ and K ν = B w, row by row.
        Span<double> lInv = stackalloc double[MaxMeasurementDimension * MaxMeasurementDimension];
        lInv.Clear();
        Span<double> unit = stackalloc double[MaxMeasurementDimension];
        for (int c = 0; c < m; c++)
        {
            unit.Clear();
            unit[c] = 1.0;
            ForwardSubstitute(chol, m, unit[..m]);
            for (int a = c; a < m; a++)
            {
                lInv[(a * m) + c] = unit[a];
            }
        }

        Span<double> gainFactor = stackalloc double[N * MaxMeasurementDimension];
        Span<double> k = stackalloc double[N * MaxMeasurementDimension];
        for (int i = 0; i < N; i++)
        {
            double move = 0;
            for (int a = 0; a < m; a++)
            {
                double sum = 0;
                for (int c = 0; c <= a; c++)
                {
                    sum += lInv[(a * m) + c] * pht[(i * m) + c];
                }

                gainFactor[(i * m) + a] = sum;
                move += sum * w[a];
            }

            for (int col = 0; col < m; col++)
            {
                double sum = 0;
                for (int a = col; a < m; a++)
                {
                    sum += gainFactor[(i * m) + a] * lInv[(a * m) + col];
                }

                k[(i * m) + col] = sum;
            }

            x[i] += move;
        }

        if (captureFactors)
        {
            gainFactor[..(N * m)].CopyTo(factors.Gain);
            CaptureFactors(lInv, h, w[..m], ref factors);
        }

        // A P with A = I - K H, using H P = (P Hᵀ)ᵀ, in place (P Hᵀ and K are already taken): P ← P - K (P Hᵀ)ᵀ.
        OuterProductUpdate.Subtract(p, k, pht, m);

        Span<double> aph = stackalloc double[N * MaxMeasurementDimension];
        for (int i = 0; i < N; i++)
        {
            for (int a = 0; a < m; a++)
            {
                double sum = 0;
                for (int t = 0; t < nonZeroCount[a]; t++)
                {
                    int j = nonZero[(a * N) + t];
                    sum += p[(i * N) + j] * h[(a * N) + j];
                }

                aph[(i * m) + a] = sum;
            }
        }

        Span<double> kr = stackalloc double[N * MaxMeasurementDimension];
        for (int i = 0; i < N; i++)
        {
            for (int b = 0; b < m; b++)
            {
                double sum = 0;
                for (int a = 0; a < m; a++)
                {
                    sum += k[(i * m) + a] * r[(a * m) + b];
                }

                kr[(i * m) + b] = sum;
            }
        }

        // Joseph's remaining terms: P ← P + (K R - A P Hᵀ) Kᵀ = P - (A P Hᵀ - K R) Kᵀ.
        for (int i = 0; i < N * m; i++)
        {
            aph[i] -= kr[i];
        }

        OuterProductUpdate.Subtract(p, aph, k, m);

        Symmetrize(ref covariance);
        RequirePositiveDefinite(covariance, x, "measurement update");
        return true;
    }

    /// <summary>w = L⁻¹ ν (already whitened) and W = Hᵀ L⁻ᵀ, row j of W being L⁻¹ times column j of H.</summary>
    private static void CaptureFactors(ReadOnlySpan<double> lInv, ReadOnlySpan<double> h, ReadOnlySpan<double> whitened, ref UpdateFactors factors)
    {
        int m = whitened.Length;
        Span<double> information = factors.Information;
        for (int j = 0; j < N; j++)
        {
            for (int a = 0; a < m; a++)
            {
                double sum = 0;
                for (int c = 0; c <= a; c++)
                {
                    sum += lInv[(a * m) + c] * h[(c * N) + j];
                }

                information[(j * m) + a] = sum;
            }
        }
    }

    /// <summary>
    /// Throws <see cref="FilterDivergenceException"/> unless every state value is finite and the covariance is
    /// positive definite (its Cholesky factorisation succeeds).
    /// </summary>
    public static void RequirePositiveDefinite(in StateMatrix covariance, in StateVector x, string context)
    {
        for (int i = 0; i < N; i++)
        {
            if (!double.IsFinite(x[i]))
            {
                throw new FilterDivergenceException($"state component {i} is not finite after {context}");
            }
        }

        if (!IsPositiveDefinite(covariance))
        {
            throw new FilterDivergenceException($"covariance is not positive definite after {context}");
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

    /// <summary>Replaces P by (P + Pᵀ) / 2.</summary>
    public static void Symmetrize(ref StateMatrix covariance)
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

    /// <summary>Lower Cholesky factor in place (row-major, upper part left as is); false if not positive definite or not finite.</summary>
    /// <remarks>Indexes through a reference after one length check: this runs after every update, as the divergence guard.</remarks>
    internal static bool CholeskyInPlace(Span<double> a, int n)
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
}
