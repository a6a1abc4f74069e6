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
        // over j in ascending order, F's zero elements left out (4 or 5 of a row's 10 are not zero; a zero term cannot
        // change a sum that starts at +0, so this is the full sum to the last bit for finite P); rows 4 and on of F P are
        // P's scaled by F's diagonal. Then (F P) Fᵀ in place.
        Span<StateRow> top = stackalloc StateRow[4];
        for (int i = 0; i < 4; i++)
        {
            var row = StateRow.Zero;
            for (int j = 0; j < N; j++)
            {
                double fij = f[(i * N) + j];
                if (fij != 0.0)
                {
                    row += StateRow.Broadcast(fij) * StateRow.Load(ref p0, j * N);
                }
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
        MatrixKernels.Symmetrize(ref covariance);
    }

    /// <summary>P ← F P Fᵀ by two dense products, the first leaving out F's zero elements.</summary>
    private static void PropagateDense(ref StateMatrix covariance, in StateMatrix jacobian)
    {
        StateMatrix fp = MatrixKernels.MultiplySkippingZeros(jacobian, covariance);
        MatrixKernels.MultiplyByTransposed(fp, jacobian, ref covariance);
        MatrixKernels.Symmetrize(ref covariance);
    }

    /// <summary>
    /// Gated measurement update in Joseph form. Computes the innovation covariance S = H P Hᵀ + R and the
    /// normalised innovation squared NIS = νᵀ S⁻¹ ν; when NIS exceeds <paramref name="gateThreshold"/> the state is
    /// left unchanged and <see cref="GateDecision.Rejected"/> is returned.
    /// </summary>
    /// <param name="x">State, updated in place when accepted.</param>
    /// <param name="covariance">Covariance, updated in place when accepted.</param>
    /// <param name="residual">Innovation ν = z - h(x), length m (angles already wrapped).</param>
    /// <param name="h">Measurement Jacobian, m x n row-major (n = <see cref="StateMatrix.Size"/>).</param>
    /// <param name="r">Measurement noise covariance, m x m row-major, symmetric positive definite.</param>
    /// <param name="gateThreshold">NIS above which the measurement is rejected; +∞ disables the gate.</param>
    /// <param name="nis">Receives the NIS.</param>
    /// <returns>The gate's decision: <see cref="GateDecision.Accepted"/> when the update was applied.</returns>
    /// <exception cref="ArgumentException">The lengths of <paramref name="residual"/>, <paramref name="h"/> and <paramref name="r"/> disagree.</exception>
    /// <exception cref="FilterDivergenceException">S or the updated covariance is not positive definite or not finite.</exception>
    public static GateDecision UpdateJosephGated(
        ref StateVector x, ref StateMatrix covariance, ReadOnlySpan<double> residual, ReadOnlySpan<double> h,
        ReadOnlySpan<double> r, double gateThreshold, out double nis)
    {
        UpdateFactors unused = default;
        return UpdateJosephGated(ref x, ref covariance, residual, h, r, gateThreshold, out nis, ref unused, captureFactors: false);
    }

    /// <summary>
    /// <see cref="UpdateJosephGated(ref StateVector, ref StateMatrix, ReadOnlySpan{double}, ReadOnlySpan{double}, ReadOnlySpan{double}, double, out double)"/>
    /// that also hands out the update's <see cref="UpdateFactors"/> when it is applied and <paramref name="captureFactors"/> is set.
    /// <see cref="UpdateFactors.Dimension"/> and <see cref="UpdateFactors.Whitened"/> (w = L⁻¹ ν, the innovation in units of
    /// its own standard deviation) are written whenever the NIS is formed, gated or not.
    /// </summary>
    /// <remarks>
    /// The steps: the innovation covariance S = H P Hᵀ + R and its Cholesky factor L (<see cref="InnovationCovariance"/>);
    /// the whitened innovation w = L⁻¹ ν and NIS = wᵀ w (<see cref="WhitenInnovation"/>); the gate test; the gain
    /// K = P Hᵀ S⁻¹ and the state's move K ν (<see cref="ApplyGain"/>); the Joseph-form covariance update
    /// (<see cref="JosephCovarianceUpdate"/>); the divergence guard.
    /// </remarks>
    public static GateDecision UpdateJosephGated(
        ref StateVector x, ref StateMatrix covariance, ReadOnlySpan<double> residual, ReadOnlySpan<double> h,
        ReadOnlySpan<double> r, double gateThreshold, out double nis, ref UpdateFactors factors, bool captureFactors)
    {
        int m = residual.Length;
        if (m < 1 || m > MaxMeasurementDimension || h.Length != m * N || r.Length != m * m)
        {
            throw new ArgumentException($"inconsistent measurement dimensions: residual {m}, H {h.Length}, R {r.Length}");
        }

        var sparseH = new SparseRows(h, m, stackalloc int[N * MaxMeasurementDimension], stackalloc int[MaxMeasurementDimension]);
        Span<double> pht = stackalloc double[N * MaxMeasurementDimension];
        MultiplyByHTransposed(covariance, sparseH, pht);
        Span<double> chol = stackalloc double[MaxMeasurementDimension * MaxMeasurementDimension];
        InnovationCovariance(sparseH, pht, r, chol);
        if (!Cholesky.FactorInPlace(chol[..(m * m)], m))
        {
            throw new FilterDivergenceException("innovation covariance S = H P Hᵀ + R is not positive definite");
        }

        Span<double> w = stackalloc double[MaxMeasurementDimension];
        nis = WhitenInnovation(chol, residual, w, ref factors);
        if (nis > gateThreshold)
        {
            return GateDecision.Rejected;
        }

        Span<double> lInv = stackalloc double[MaxMeasurementDimension * MaxMeasurementDimension];
        Cholesky.InvertLower(chol, m, lInv);
        Span<double> gainFactor = stackalloc double[N * MaxMeasurementDimension];
        Span<double> k = stackalloc double[N * MaxMeasurementDimension];
        ApplyGain(ref x, lInv, pht, w, m, gainFactor, k);
        if (captureFactors)
        {
            gainFactor[..(N * m)].CopyTo(factors.Gain);
            CaptureFactors(lInv, h, w[..m], ref factors);
        }

        JosephCovarianceUpdate(ref covariance, sparseH, r, k, pht);
        RequirePositiveDefinite(covariance, x, "measurement update");
        return GateDecision.Accepted;
    }

    /// <summary>
    /// The non-zero columns of each row of an m x n measurement Jacobian H: H has one or two non-zero entries per row here,
    /// and the products with it run over those only.
    /// </summary>
    private readonly ref struct SparseRows
    {
        public SparseRows(ReadOnlySpan<double> h, int rows, Span<int> columns, Span<int> counts)
        {
            H = h;
            Rows = rows;
            Columns = columns;
            Counts = counts;
            for (int row = 0; row < rows; row++)
            {
                int count = 0;
                for (int j = 0; j < N; j++)
                {
                    if (h[(row * N) + j] != 0)
                    {
                        columns[(row * N) + count++] = j;
                    }
                }

                counts[row] = count;
            }
        }

        /// <summary>H, m x n row-major.</summary>
        public ReadOnlySpan<double> H { get; }

        /// <summary>m.</summary>
        public int Rows { get; }

        /// <summary>Row a's non-zero columns at a * n, a * n + 1, ...</summary>
        public Span<int> Columns { get; }

        /// <summary>How many non-zero columns row a has.</summary>
        public Span<int> Counts { get; }
    }

    /// <summary>P Hᵀ (n x m, element (i, a) at i * m + a), summed over H's non-zero columns in ascending order.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static void MultiplyByHTransposed(ReadOnlySpan<double> p, in SparseRows sparse, Span<double> pht)
    {
        int m = sparse.Rows;
        ReadOnlySpan<double> h = sparse.H;
        ReadOnlySpan<int> columns = sparse.Columns;
        ReadOnlySpan<int> counts = sparse.Counts;
        for (int i = 0; i < N; i++)
        {
            for (int a = 0; a < m; a++)
            {
                double sum = 0;
                for (int t = 0; t < counts[a]; t++)
                {
                    int j = columns[(a * N) + t];
                    sum += p[(i * N) + j] * h[(a * N) + j];
                }

                pht[(i * m) + a] = sum;
            }
        }
    }

    /// <summary>Innovation covariance S = H (P Hᵀ) + R, m x m, written to <paramref name="s"/>.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static void InnovationCovariance(in SparseRows sparse, ReadOnlySpan<double> pht, ReadOnlySpan<double> r, Span<double> s)
    {
        int m = sparse.Rows;
        ReadOnlySpan<double> h = sparse.H;
        ReadOnlySpan<int> columns = sparse.Columns;
        ReadOnlySpan<int> counts = sparse.Counts;
        for (int a = 0; a < m; a++)
        {
            for (int b = 0; b < m; b++)
            {
                double sum = r[(a * m) + b];
                for (int t = 0; t < counts[a]; t++)
                {
                    int i = columns[(a * N) + t];
                    sum += h[(a * N) + i] * pht[(i * m) + b];
                }

                s[(a * m) + b] = sum;
            }
        }
    }

    /// <summary>
    /// Whitened innovation w = L⁻¹ ν (S = L Lᵀ) into <paramref name="w"/> and into <paramref name="factors"/>, and returns
    /// NIS = wᵀ w = νᵀ S⁻¹ ν.
    /// </summary>
    /// <exception cref="FilterDivergenceException">The NIS is not finite.</exception>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static double WhitenInnovation(ReadOnlySpan<double> l, ReadOnlySpan<double> residual, Span<double> w, ref UpdateFactors factors)
    {
        int m = residual.Length;
        residual.CopyTo(w);
        Cholesky.ForwardSubstitute(l, m, w[..m]);
        double nis = 0;
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

        return nis;
    }

    /// <summary>
    /// With L⁻¹ given: B = P Hᵀ L⁻ᵀ into <paramref name="gainFactor"/>, the gain K = P Hᵀ S⁻¹ = B L⁻¹ into
    /// <paramref name="k"/> (both n x m), and x ← x + K ν = x + B w, row by row.
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static void ApplyGain(
        ref StateVector x, ReadOnlySpan<double> lInv, ReadOnlySpan<double> pht, ReadOnlySpan<double> w, int m, Span<double> gainFactor, Span<double> k)
    {
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
    }

    /// <summary>
    /// Joseph form P ← A P Aᵀ + K R Kᵀ with A = I - K H, in two rank-m steps and symmetrised; <paramref name="pht"/> is
    /// P Hᵀ of the covariance before the update.
    /// </summary>
    private static void JosephCovarianceUpdate(
        ref StateMatrix covariance, in SparseRows h, ReadOnlySpan<double> r, ReadOnlySpan<double> k, ReadOnlySpan<double> pht)
    {
        int m = h.Rows;
        Span<double> p = covariance;

        // A P, using H P = (P Hᵀ)ᵀ, in place (P Hᵀ and K are already taken): P ← P - K (P Hᵀ)ᵀ.
        OuterProductUpdate.Subtract(p, k, pht, m);

        Span<double> aph = stackalloc double[N * MaxMeasurementDimension];
        MultiplyByHTransposed(p, h, aph);
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
        MatrixKernels.Symmetrize(ref covariance);
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
    /// positive definite (<see cref="MatrixKernels.IsPositiveDefinite"/>).
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

        if (!MatrixKernels.IsPositiveDefinite(covariance))
        {
            throw new FilterDivergenceException($"covariance is not positive definite after {context}");
        }
    }
}
