using FusionService.Estimation.Reference;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// Fusing two Gaussians: source check-values §7 (textbook identity, derived). Fusing N(m1, s1²) and N(m2, s2²)
/// gives variance s1² s2² / (s1² + s2²), always below both inputs, and mean (m1 s2² + m2 s1²) / (s1² + s2²);
/// a one-state filter with H = 1, prior N(m1, s1²), measurement m2 with R = s2² must reproduce it.
/// </summary>
public sealed class GaussianProductTests
{
    // 1e-15 relative is about 4.5 units in the last place: the filter's gain goes through a square root and two
    // divisions and the Joseph form adds two rounded terms, each a fraction of an ulp.
    private const double RelativeTolerance = 1e-15;

    [Theory]
    [InlineData(0.0, 1.0, 1.0, 1.0)]
    [InlineData(10.0, 4.0, 12.0, 1.0)]
    [InlineData(-3.5, 0.25, -2.0, 9.0)]
    [InlineData(100.0, 1e-4, 101.0, 1e2)]
    [InlineData(1.0, 7.0, 3.0, 7.0)]
    [InlineData(-0.37727, 0.01, -0.5, 0.0004)]
    public void One_state_update_reproduces_the_Gaussian_product(double m1, double var1, double m2, double var2)
    {
        var prior = new GaussianEstimate(Dense.V(m1), Dense.Scalar(var1));

        var fused = DenseKalmanFilter.Update(prior, Dense.V(m2), Dense.Scalar(1.0), Dense.Scalar(var2)).Posterior;

        // check-values §7 (derived)
        double expectedVariance = var1 * var2 / (var1 + var2);
        double expectedMean = ((m1 * var2) + (m2 * var1)) / (var1 + var2);
        RelativeAssert.Relative(expectedMean, fused.Mean[0], RelativeTolerance, "fused mean");
        RelativeAssert.Relative(expectedVariance, fused.Covariance[0, 0], RelativeTolerance, "fused variance");
        Assert.True(fused.Covariance[0, 0] < var1, "fused variance must lie below the prior variance");
        Assert.True(fused.Covariance[0, 0] < var2, "fused variance must lie below the measurement variance");
    }
}
