// Cholesky factor of a symmetric positive semi-definite 8 x 8 matrix.
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Scenarios;

/// <summary>
/// Lower-triangular L with L Lᵀ = A for a symmetric positive semi-definite 8 x 8 A (Cholesky-Banachiewicz order).
/// A pivot not above 1e-12 times its diagonal entry is treated as zero and its column set to zero, so singular
/// process covariances (a switched-off component) still factor.
/// </summary>
internal static class SemidefiniteCholesky
{
    private const double RelativePivotFloor = 1e-12;

    public static void Factor(in StateMatrix a, out StateMatrix lower)
    {
        const int n = StateMatrix.Size;
        lower = default;
        for (int j = 0; j < n; j++)
        {
            double diag = a[(j * n) + j];
            double pivot = diag;
            for (int k = 0; k < j; k++)
            {
                pivot -= lower[(j * n) + k] * lower[(j * n) + k];
            }

            if (!(pivot > RelativePivotFloor * Math.Abs(diag)) || pivot <= 0.0)
            {
                if (pivot < -1e-9 * Math.Max(Math.Abs(diag), double.Epsilon))
                {
                    throw new ArgumentException($"matrix is not positive semi-definite (pivot {pivot} at {j})", nameof(a));
                }

                continue;
            }

            double ljj = Math.Sqrt(pivot);
            lower[(j * n) + j] = ljj;
            for (int i = j + 1; i < n; i++)
            {
                double sum = a[(i * n) + j];
                for (int k = 0; k < j; k++)
                {
                    sum -= lower[(i * n) + k] * lower[(j * n) + k];
                }

                lower[(i * n) + j] = sum / ljj;
            }
        }
    }
}
