using FusionService.Estimation.Filtering;
using FusionService.Estimation.Gating;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Reference;
using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// The fixed-size, allocation-free <see cref="ExtendedKalmanFilter"/> steps must compute the same numbers as the
/// dense reference <see cref="DenseKalmanFilter"/> (Kalman 1960; Joseph form, Bucy and Joseph 1968, from memory)
/// on random 8-state cases: seeded random SPD P, F with rows 4 to 7 of the identity (the structure
/// <see cref="ExtendedKalmanFilter.PropagateCovariance"/> assumes), H of 1 to 3 rows and SPD R (invented test data).
/// Both sides implement the same formulas in a different order of operations, so they agree to round-off:
/// 1e-12 relative to the largest element.
/// </summary>
public sealed class FixedSizeFilterAgreementTests
{
    private const double RelativeTolerance = 1e-12;
    private const int N = StateMatrix.Size;

    [Theory]
    [InlineData(1)]
    [InlineData(2)]
    [InlineData(3)]
    [InlineData(4)]
    [InlineData(5)]
    public void PropagateCovariance_equals_the_dense_prediction(int seed)
    {
        var random = new Random(seed);
        var p = Dense.RandomSpd(random, N, 0.1);
        var f = RandomTransition(random);
        var fixedSize = ToStateMatrix(p);

        ExtendedKalmanFilter.PropagateCovariance(ref fixedSize, ToStateMatrix(f));
        var dense = DenseKalmanFilter.Predict(new GaussianEstimate(Vector<double>.Build.Dense(N), p), f, Dense.Zero(N, N));

        RelativeAssert.Relative(dense.Covariance, ToDense(fixedSize), RelativeTolerance, "F P Fᵀ");
        RelativeAssert.SymmetricPositiveDefinite(ToDense(fixedSize), "F P Fᵀ");
    }

    [Theory]
    [InlineData(1, 1)]
    [InlineData(2, 1)]
    [InlineData(3, 2)]
    [InlineData(4, 2)]
    [InlineData(5, 3)]
    [InlineData(6, 3)]
    public void UpdateJosephGated_equals_the_dense_update(int seed, int measurementDimension)
    {
        var random = new Random(seed);
        var (x, p, h, r, residual) = RandomUpdateCase(random, measurementDimension, residualScale: 1.0);
        var xFixed = ToStateVector(x);
        var pFixed = ToStateMatrix(p);

        GateDecision decision = ExtendedKalmanFilter.UpdateJosephGated(
            ref xFixed, ref pFixed, residual.ToArray(), RowMajor(h), RowMajor(r), double.PositiveInfinity, out double nis);
        var dense = DenseKalmanFilter.Update(new GaussianEstimate(x, p), (h * x) + residual, h, r);

        Assert.Equal(GateDecision.Accepted, decision);
        RelativeAssert.Relative(dense.Nis, nis, RelativeTolerance, "NIS");
        RelativeAssert.Relative(dense.Posterior.Mean, ToDense(xFixed), RelativeTolerance, "posterior mean");
        RelativeAssert.Relative(dense.Posterior.Covariance, ToDense(pFixed), RelativeTolerance, "posterior covariance");
        RelativeAssert.SymmetricPositiveDefinite(ToDense(pFixed), "posterior covariance");
    }

    /// <summary>
    /// The factors an applied update hands to a fixed-point smoother (<see cref="UpdateFactors"/>) against the dense
    /// quantities they stand for: B w = K ν (the state's move), B Bᵀ = K H P (the covariance's reduction for the optimal
    /// gain), W Wᵀ = Hᵀ S⁻¹ H and B = P W, with K = P Hᵀ S⁻¹ and S = H P Hᵀ + R computed by MathNet.Numerics.
    /// </summary>
    [Theory]
    [InlineData(11, 1)]
    [InlineData(12, 2)]
    [InlineData(13, 3)]
    public void Update_factors_reproduce_the_dense_gain_and_covariance_reduction(int seed, int measurementDimension)
    {
        var random = new Random(seed);
        var (x, p, h, r, residual) = RandomUpdateCase(random, measurementDimension, residualScale: 1.0);
        var xFixed = ToStateVector(x);
        var pFixed = ToStateMatrix(p);
        UpdateFactors factors = default;

        GateDecision decision = ExtendedKalmanFilter.UpdateJosephGated(
            ref xFixed, ref pFixed, residual.ToArray(), RowMajor(h), RowMajor(r), double.PositiveInfinity, out _, ref factors, captureFactors: true);

        Assert.Equal(GateDecision.Accepted, decision);
        Assert.Equal(measurementDimension, factors.Dimension);
        int m = measurementDimension;
        double[] information = ((ReadOnlySpan<double>)factors.Information).ToArray();
        double[] gainFactor = ((ReadOnlySpan<double>)factors.Gain).ToArray();
        double[] whitenedResidual = ((ReadOnlySpan<double>)factors.Whitened).ToArray();
        var w = Matrix<double>.Build.Dense(N, m, (i, a) => information[(i * m) + a]);
        var b = Matrix<double>.Build.Dense(N, m, (i, a) => gainFactor[(i * m) + a]);
        var whitened = Vector<double>.Build.Dense(m, a => whitenedResidual[a]);
        var s = (h * p * h.Transpose()) + r;
        var gain = p * h.Transpose() * s.Inverse();

        RelativeAssert.Relative(gain * residual, b * whitened, RelativeTolerance, "state move K ν against B w");
        RelativeAssert.Relative(gain * h * p, b * b.Transpose(), RelativeTolerance, "covariance reduction K H P against B Bᵀ");
        RelativeAssert.Relative(h.Transpose() * s.Inverse() * h, w * w.Transpose(), RelativeTolerance, "Hᵀ S⁻¹ H against W Wᵀ");
        RelativeAssert.Relative(p * w, b, RelativeTolerance, "P W against B");
    }

    /// <summary>
    /// The divergence guard's positive-definiteness test against MathNet.Numerics' eigenvalues on random symmetric
    /// matrices, about half of them indefinite (a random shift of the spectrum), plus NaN and infinite entries. Matrices
    /// within 1e-9 of singular relative to their largest eigenvalue are left out: there either answer is round-off.
    /// </summary>
    [Fact]
    public void Positive_definiteness_test_agrees_with_the_eigenvalues()
    {
        var random = new Random(2024);
        int definite = 0, indefinite = 0;
        for (int trial = 0; trial < 400; trial++)
        {
            var a = Dense.RandomSpd(random, N, 0.1);
            var eigenvalues = a.Evd().EigenValues.Select(e => e.Real).ToArray();
            double shift = eigenvalues.Min() + ((eigenvalues.Max() - eigenvalues.Min()) * (random.NextDouble() - 0.5));
            var shifted = a - (Dense.Identity(N) * shift);
            var values = shifted.Evd().EigenValues.Select(e => e.Real).ToArray();
            if (Math.Abs(values.Min()) <= 1e-9 * values.Max(Math.Abs))
            {
                continue;
            }

            bool expected = values.Min() > 0;
            Assert.Equal(expected, MatrixKernels.IsPositiveDefinite(ToStateMatrix(shifted)));
            if (expected)
            {
                definite++;
            }
            else
            {
                indefinite++;
            }
        }

        Assert.True(definite > 50 && indefinite > 50, $"{definite} definite and {indefinite} indefinite cases");
        var withNaN = ToStateMatrix(Dense.RandomSpd(random, N, 0.1));
        withNaN[(3 * N) + 5] = double.NaN;
        withNaN[(5 * N) + 3] = double.NaN;
        Assert.False(MatrixKernels.IsPositiveDefinite(withNaN));
        var withInfinity = ToStateMatrix(Dense.RandomSpd(random, N, 0.1));
        withInfinity[(2 * N) + 2] = double.PositiveInfinity;
        Assert.False(MatrixKernels.IsPositiveDefinite(withInfinity));
    }

    [Theory]
    [InlineData(7, 1)]
    [InlineData(8, 2)]
    [InlineData(9, 3)]
    public void A_measurement_beyond_the_gate_leaves_state_and_covariance_untouched(int seed, int measurementDimension)
    {
        var random = new Random(seed);
        var (x, p, h, r, residual) = RandomUpdateCase(random, measurementDimension, residualScale: 100.0);
        var xFixed = ToStateVector(x);
        var pFixed = ToStateMatrix(p);
        double threshold = new ChiSquareGate().Threshold(measurementDimension);

        GateDecision decision = ExtendedKalmanFilter.UpdateJosephGated(
            ref xFixed, ref pFixed, residual.ToArray(), RowMajor(h), RowMajor(r), threshold, out double nis);
        double denseNis = DenseKalmanFilter.Update(new GaussianEstimate(x, p), (h * x) + residual, h, r).Nis;

        Assert.Equal(GateDecision.Rejected, decision);
        Assert.True(nis > threshold, $"NIS {nis} should exceed the gate {threshold}");
        RelativeAssert.Relative(denseNis, nis, RelativeTolerance, "NIS of the rejected measurement");
        Assert.Equal(x.ToArray(), ToDense(xFixed).ToArray());
        Assert.Equal(p.ToRowMajorArray(), ToDense(pFixed).ToRowMajorArray());
    }

    private static (Vector<double> X, Matrix<double> P, Matrix<double> H, Matrix<double> R, Vector<double> Residual)
        RandomUpdateCase(Random random, int m, double residualScale)
    {
        var x = Vector<double>.Build.Dense(N, _ => Dense.Gaussian(random));
        var p = Dense.RandomSpd(random, N, 0.1);
        var h = Matrix<double>.Build.Dense(m, N, (_, _) => Dense.Gaussian(random));
        var r = Dense.RandomSpd(random, m, 0.05);
        var s = (h * p * h.Transpose()) + r;

        // A residual drawn from N(0, S), scaled: 1 gives a typical NIS, 100 one far beyond any gate.
        var residual = s.Cholesky().Factor * Vector<double>.Build.Dense(m, _ => Dense.Gaussian(random)) * residualScale;
        return (x, p, h, r, residual);
    }

    private static Matrix<double> RandomTransition(Random random)
    {
        var f = Dense.Identity(N);
        for (int i = 0; i < 4; i++)
        {
            for (int j = 0; j < N; j++)
            {
                f[i, j] = Dense.Gaussian(random);
            }
        }

        return f;
    }

    private static double[] RowMajor(Matrix<double> matrix) => matrix.ToRowMajorArray();

    private static StateMatrix ToStateMatrix(Matrix<double> matrix)
    {
        var result = default(StateMatrix);
        for (int i = 0; i < N; i++)
        {
            for (int j = 0; j < N; j++)
            {
                result[(i * N) + j] = matrix[i, j];
            }
        }

        return result;
    }

    private static Matrix<double> ToDense(StateMatrix matrix) => Matrix<double>.Build.Dense(N, N, (i, j) => matrix[(i * N) + j]);

    private static StateVector ToStateVector(Vector<double> vector)
    {
        var result = default(StateVector);
        for (int i = 0; i < N; i++)
        {
            result[i] = vector[i];
        }

        return result;
    }

    private static Vector<double> ToDense(StateVector vector) => Vector<double>.Build.Dense(N, i => vector[i]);
}
