using FusionService.Estimation.Filtering;
using FusionService.Estimation.Reference;
using MathNet.Numerics.LinearAlgebra;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>What the dense reference filter and smoother do with degenerate input (documented behaviour).</summary>
public sealed class DenseDegenerateInputTests
{
    private static readonly GaussianEstimate TwoState =
        new(Dense.V(1.0, 2.0), Dense.M(new[,] { { 2.0, 0.5 }, { 0.5, 1.0 } }));

    [Fact]
    public void Update_with_a_singular_innovation_covariance_throws_FilterDivergenceException()
    {
        var certain = new GaussianEstimate(Dense.V(1.0), Dense.Scalar(0.0));

        Assert.Throws<FilterDivergenceException>(
            () => DenseKalmanFilter.Update(certain, Dense.V(2.0), Dense.Scalar(1.0), Dense.Scalar(0.0)));
    }

    [Fact]
    public void Non_finite_input_is_rejected_before_any_arithmetic()
    {
        var h = Dense.M(new[,] { { 1.0, 0.0 } });
        Assert.Throws<ArgumentException>(() => DenseKalmanFilter.Update(TwoState, Dense.V(double.NaN), h, Dense.Scalar(1.0)));
        Assert.Throws<ArgumentException>(
            () => DenseKalmanFilter.Update(TwoState, Dense.V(1.0), h, Dense.Scalar(double.PositiveInfinity)));
        Assert.Throws<ArgumentException>(
            () => DenseKalmanFilter.Predict(new GaussianEstimate(Dense.V(double.NaN, 0.0), TwoState.Covariance), Dense.Identity(2), Dense.Zero(2, 2)));
    }

    [Fact]
    public void Mismatched_dimensions_are_rejected()
    {
        Assert.Throws<ArgumentException>(() => DenseKalmanFilter.Predict(TwoState, Dense.Identity(3), Dense.Zero(2, 2)));
        Assert.Throws<ArgumentException>(
            () => DenseKalmanFilter.Update(TwoState, Dense.V(1.0, 2.0), Dense.M(new[,] { { 1.0, 0.0 } }), Dense.Identity(2)));
    }

    [Fact]
    public void Inputs_are_not_modified()
    {
        var mean = TwoState.Mean.Clone();
        var covariance = TwoState.Covariance.Clone();
        var f = Dense.M(new[,] { { 1.0, 1.0 }, { 0.0, 1.0 } });
        var h = Dense.M(new[,] { { 1.0, 0.0 } });

        var predicted = DenseKalmanFilter.Predict(TwoState, f, Dense.Identity(2));
        DenseKalmanFilter.Update(predicted, Dense.V(5.0), h, Dense.Scalar(1.0));

        Assert.Equal(mean, TwoState.Mean);
        Assert.Equal(covariance, TwoState.Covariance);
        Assert.Equal(Dense.M(new[,] { { 1.0, 1.0 }, { 0.0, 1.0 } }), f);
    }

    [Fact]
    public void Smoother_of_a_single_estimate_returns_it_with_no_cross_covariance()
    {
        var result = DenseRauchTungStriebelSmoother.SmoothWithCrossCovariance(
            new[] { TwoState }, new GaussianEstimate?[] { null }, new Matrix<double>?[] { null });

        Assert.Same(TwoState, Assert.Single(result.Estimates));
        Assert.Empty(result.LagOneCrossCovariances);
    }

    [Fact]
    public void Smoother_rejects_missing_steps_and_unequal_counts()
    {
        var f = Dense.Identity(2);
        Assert.Throws<ArgumentNullException>(() => DenseRauchTungStriebelSmoother.Smooth(
            new[] { TwoState, TwoState }, new GaussianEstimate?[] { null, null }, new Matrix<double>?[] { null, f }));
        Assert.Throws<ArgumentException>(() => DenseRauchTungStriebelSmoother.Smooth(
            new[] { TwoState, TwoState }, new GaussianEstimate?[] { null, TwoState }, new Matrix<double>?[] { null }));
        Assert.Throws<ArgumentException>(() => DenseRauchTungStriebelSmoother.Smooth(
            Array.Empty<GaussianEstimate>(), Array.Empty<GaussianEstimate?>(), Array.Empty<Matrix<double>?>()));
    }

    [Fact]
    public void Smoother_with_a_singular_predicted_covariance_throws_FilterDivergenceException()
    {
        var singular = new GaussianEstimate(Dense.V(1.0, 2.0), Dense.M(new[,] { { 1.0, 1.0 }, { 1.0, 1.0 } }));

        Assert.Throws<FilterDivergenceException>(() => DenseRauchTungStriebelSmoother.Smooth(
            new[] { TwoState, TwoState }, new GaussianEstimate?[] { null, singular }, new Matrix<double>?[] { null, Dense.Identity(2) }));
    }
}
