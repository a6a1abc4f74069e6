using FusionService.Estimation.Filtering;
using MathNet.Numerics.LinearAlgebra;
using MathNet.Numerics.LinearAlgebra.Factorization;

namespace FusionService.Estimation.Reference;

/// <summary>Argument checks and small helpers shared by the dense reference filter and smoother.</summary>
internal static class DenseChecks
{
    public static void RequireEstimate(GaussianEstimate estimate, string name)
    {
        ArgumentNullException.ThrowIfNull(estimate, name);
        ArgumentNullException.ThrowIfNull(estimate.Mean, name + ".Mean");
        ArgumentNullException.ThrowIfNull(estimate.Covariance, name + ".Covariance");
        int n = estimate.Mean.Count;
        RequireShape(estimate.Covariance, n, n, name + ".Covariance");
        RequireFinite(estimate.Mean, name + ".Mean");
        RequireFinite(estimate.Covariance, name + ".Covariance");
    }

    public static void RequireShape(Matrix<double> matrix, int rows, int columns, string name)
    {
        ArgumentNullException.ThrowIfNull(matrix, name);
        if (matrix.RowCount != rows || matrix.ColumnCount != columns)
        {
            throw new ArgumentException(
                $"{name} is {matrix.RowCount} x {matrix.ColumnCount}, expected {rows} x {columns}", name);
        }
    }

    public static void RequireFinite(Matrix<double> matrix, string name)
    {
        if (!matrix.ForAll(double.IsFinite))
        {
            throw new ArgumentException($"{name} contains a value that is not finite", name);
        }
    }

    public static void RequireFinite(Vector<double> vector, string name)
    {
        if (!vector.ForAll(double.IsFinite))
        {
            throw new ArgumentException($"{name} contains a value that is not finite", name);
        }
    }

    /// <summary>Cholesky factor of a matrix that must be positive definite (only its lower triangle is read).</summary>
    public static Cholesky<double> FactorPositiveDefinite(Matrix<double> matrix, string what)
    {
        // MathNet's factorisation only rejects non-positive pivots, so a NaN would slip through: check first.
        if (!matrix.ForAll(double.IsFinite))
        {
            throw new FilterDivergenceException($"{what} is not finite");
        }

        try
        {
            return matrix.Cholesky();
        }
        catch (ArgumentException ex)
        {
            throw new FilterDivergenceException($"{what} is not positive definite", ex);
        }
    }

    /// <summary>(A + Aᵀ) / 2, removing the asymmetry round-off leaves in a covariance.</summary>
    public static Matrix<double> Symmetrized(Matrix<double> matrix) => (matrix + matrix.Transpose()) * 0.5;

    public static void RequireFiniteResult(GaussianEstimate estimate, string context)
    {
        if (!estimate.Mean.ForAll(double.IsFinite) || !estimate.Covariance.ForAll(double.IsFinite))
        {
            throw new FilterDivergenceException($"estimate is not finite after {context}");
        }
    }
}
