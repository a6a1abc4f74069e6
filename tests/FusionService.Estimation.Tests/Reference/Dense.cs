using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>Short builders for the dense matrices and vectors of the reference tests.</summary>
internal static class Dense
{
    public static Matrix<double> M(double[,] values) => Matrix<double>.Build.DenseOfArray(values);

    public static Matrix<double> Scalar(double value) => Matrix<double>.Build.Dense(1, 1, value);

    public static Vector<double> V(params double[] values) => Vector<double>.Build.DenseOfArray(values);

    public static Matrix<double> Identity(int n) => Matrix<double>.Build.DenseIdentity(n);

    public static Matrix<double> Zero(int rows, int columns) => Matrix<double>.Build.Dense(rows, columns);

    /// <summary>Standard normal deviates from a seeded generator (Box–Muller through MathNet's Normal).</summary>
    public static double Gaussian(Random random) => MathNet.Numerics.Distributions.Normal.Sample(random, 0.0, 1.0);

    /// <summary>A random symmetric positive definite matrix A Aᵀ / n + floor I with standard normal A.</summary>
    public static Matrix<double> RandomSpd(Random random, int n, double floor)
    {
        var a = Matrix<double>.Build.Dense(n, n, (_, _) => Gaussian(random));
        var spd = (a * a.Transpose() / n) + (floor * Identity(n));
        return (spd + spd.Transpose()) * 0.5;
    }
}
