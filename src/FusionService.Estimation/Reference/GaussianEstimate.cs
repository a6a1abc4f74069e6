using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Reference;

/// <summary>
/// A Gaussian state estimate N(<paramref name="Mean"/>, <paramref name="Covariance"/>) used by the dense reference
/// filter and smoother.
/// </summary>
/// <remarks>
/// Units follow the state: the mean is in the units of each state component and element (i, j) of the
/// covariance in the product of the units of components i and j. The record does not copy its arguments;
/// the dense filter and smoother never modify the matrices and vectors they are given.
/// </remarks>
/// <param name="Mean">State mean x̂, length n.</param>
/// <param name="Covariance">State error covariance P, n x n, symmetric positive semi-definite.</param>
public sealed record GaussianEstimate(Vector<double> Mean, Matrix<double> Covariance);
