using System.Globalization;
using MathNet.Numerics.LinearAlgebra;
using Xunit.Sdk;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// Tolerance checks for the reference tests; a failure names the quantity and prints expected, actual and their
/// difference with round-trip precision.
/// </summary>
internal static class RelativeAssert
{
    /// <summary>Passes when |actual - expected| ≤ <paramref name="absoluteTolerance"/> (in the quantity's unit).</summary>
    public static void Absolute(double expected, double actual, double absoluteTolerance, string quantity)
    {
        double difference = actual - expected;
        if (!(Math.Abs(difference) <= absoluteTolerance))
        {
            throw new XunitException(Message(quantity, expected, actual, difference,
                string.Create(CultureInfo.InvariantCulture, $"absolute tolerance {absoluteTolerance:G6}")));
        }
    }

    /// <summary>Passes when |actual - expected| ≤ <paramref name="relativeTolerance"/> |expected|.</summary>
    public static void Relative(double expected, double actual, double relativeTolerance, string quantity)
    {
        double difference = actual - expected;
        if (!(Math.Abs(difference) <= relativeTolerance * Math.Abs(expected)))
        {
            throw new XunitException(Message(quantity, expected, actual, difference,
                string.Create(CultureInfo.InvariantCulture,
                    $"relative tolerance {relativeTolerance:G6}, relative difference {Math.Abs(difference / expected):G6}")));
        }
    }

    /// <summary>
    /// Norm-wise relative check of a vector: every |actualᵢ - expectedᵢ| ≤ <paramref name="relativeTolerance"/>
    /// max |expected|, so components near zero are judged on the vector's scale, not their own.
    /// </summary>
    public static void Relative(Vector<double> expected, Vector<double> actual, double relativeTolerance, string quantity)
    {
        if (expected.Count != actual.Count)
        {
            throw new XunitException(string.Create(CultureInfo.InvariantCulture,
                $"{quantity}: expected length {expected.Count}, actual length {actual.Count}"));
        }

        double scale = expected.AbsoluteMaximum();
        for (int i = 0; i < expected.Count; i++)
        {
            double difference = actual[i] - expected[i];
            if (!(Math.Abs(difference) <= relativeTolerance * scale))
            {
                throw new XunitException(Message(
                    string.Create(CultureInfo.InvariantCulture, $"{quantity}[{i}]"), expected[i], actual[i], difference,
                    string.Create(CultureInfo.InvariantCulture,
                        $"tolerance {relativeTolerance:G6} x max|expected| {scale:G6}")));
            }
        }
    }

    /// <summary>
    /// Norm-wise relative check of a matrix: every |actualᵢⱼ - expectedᵢⱼ| ≤ <paramref name="relativeTolerance"/>
    /// max |expected|.
    /// </summary>
    public static void Relative(Matrix<double> expected, Matrix<double> actual, double relativeTolerance, string quantity)
    {
        if (expected.RowCount != actual.RowCount || expected.ColumnCount != actual.ColumnCount)
        {
            throw new XunitException(string.Create(CultureInfo.InvariantCulture,
                $"{quantity}: expected {expected.RowCount} x {expected.ColumnCount}, actual {actual.RowCount} x {actual.ColumnCount}"));
        }

        double scale = expected.Enumerate().Max(Math.Abs);
        for (int i = 0; i < expected.RowCount; i++)
        {
            for (int j = 0; j < expected.ColumnCount; j++)
            {
                double difference = actual[i, j] - expected[i, j];
                if (!(Math.Abs(difference) <= relativeTolerance * scale))
                {
                    throw new XunitException(Message(
                        string.Create(CultureInfo.InvariantCulture, $"{quantity}[{i},{j}]"), expected[i, j], actual[i, j],
                        difference,
                        string.Create(CultureInfo.InvariantCulture,
                            $"tolerance {relativeTolerance:G6} x max|expected| {scale:G6}")));
                }
            }
        }
    }

    /// <summary>Passes when the matrix is exactly symmetric and its smallest eigenvalue is positive.</summary>
    public static void SymmetricPositiveDefinite(Matrix<double> matrix, string quantity)
    {
        for (int i = 0; i < matrix.RowCount; i++)
        {
            for (int j = i + 1; j < matrix.ColumnCount; j++)
            {
                if (matrix[i, j] != matrix[j, i])
                {
                    throw new XunitException(Message(
                        string.Create(CultureInfo.InvariantCulture, $"{quantity} symmetry [{i},{j}] vs [{j},{i}]"),
                        matrix[i, j], matrix[j, i], matrix[j, i] - matrix[i, j], "exact equality"));
                }
            }
        }

        double minimumEigenvalue = matrix.Evd(Symmetricity.Symmetric).EigenValues.Min(e => e.Real);
        if (!(minimumEigenvalue > 0))
        {
            throw new XunitException(string.Create(CultureInfo.InvariantCulture,
                $"{quantity} is not positive definite: smallest eigenvalue {minimumEigenvalue:R}"));
        }
    }

    private static string Message(string quantity, double expected, double actual, double difference, string tolerance)
        => string.Create(CultureInfo.InvariantCulture,
            $"{quantity}: expected {expected:R}, actual {actual:R}, difference {difference:R} ({tolerance})");
}
