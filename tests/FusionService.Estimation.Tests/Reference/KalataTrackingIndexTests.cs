using FusionService.Estimation.Reference;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// Steady-state gains of a constant-velocity filter against the tracking index: source check-values §4
/// (Kalata, IEEE Trans. AES 20(2), 1984; formulas from memory, values derived by iterating the Riccati equation).
/// State [position, velocity], F = [[1, T], [0, 1]], H = [1, 0], R = s_v²; the steady-state gain is
/// [alpha, beta / T]. Bar-Shalom, Li and Kirubarajan 2001 treat both process noise models (section from memory).
/// </summary>
public sealed class KalataTrackingIndexTests
{
    private const int Steps = 3000;

    [Theory]
    // check-values §4: lambda = 1 -> alpha = 0.75, beta = 0.5; lambda = 0.1 -> alpha = 0.36, beta = 0.08.
    [InlineData(1.0, 1.0, 0.75, 0.5)]
    [InlineData(1.0, 0.5, 0.75, 0.5)]
    [InlineData(0.1, 1.0, 0.36, 0.08)]
    [InlineData(0.1, 2.0, 0.36, 0.08)]
    public void Discrete_white_noise_acceleration_gains_equal_the_tabulated_values(
        double lambda, double periodS, double alpha, double beta)
    {
        var (alphaFilter, betaFilter) = SteadyStateGains(DiscreteWhiteNoiseAccelerationQ(lambda, periodS, 1.0), periodS, 1.0);

        RelativeAssert.Absolute(alpha, alphaFilter, 1e-6, "alpha");
        RelativeAssert.Absolute(beta, betaFilter, 1e-6, "beta");
    }

    [Theory]
    [InlineData(0.01, 1.0)]
    [InlineData(0.5, 1.0)]
    [InlineData(2.0, 0.2)]
    [InlineData(10.0, 1.0)]
    [InlineData(0.3, 5.0)]
    public void Discrete_white_noise_acceleration_gains_equal_the_closed_form(double lambda, double periodS)
    {
        const double sigmaV = 2.0;
        var (alphaFilter, betaFilter) = SteadyStateGains(DiscreteWhiteNoiseAccelerationQ(lambda, periodS, sigmaV), periodS, sigmaV);

        // check-values §4 closed form (Kalata 1984, from memory), recomputed here.
        double root = Math.Sqrt((lambda * lambda) + (8 * lambda));
        double alpha = -((lambda * lambda) + (8 * lambda) - ((lambda + 4) * root)) / 8;
        double beta = ((lambda * lambda) + (4 * lambda) - (lambda * root)) / 4;
        RelativeAssert.Absolute(alpha, alphaFilter, 1e-10, "alpha");
        RelativeAssert.Absolute(beta, betaFilter, 1e-10, "beta");
    }

    [Theory]
    // check-values §4 (derived): lambda_c = 1 -> alpha = 0.756738, beta = 0.493216.
    [InlineData(1.0, 0.756738, 0.493216)]
    [InlineData(0.25, 0.756738, 0.493216)]
    [InlineData(4.0, 0.756738, 0.493216)]
    public void Continuous_white_acceleration_gains_equal_the_tabulated_values(double periodS, double alpha, double beta)
    {
        const double sigmaV = 1.5;
        const double lambdaC = 1.0;

        // lambda_c = sqrt(q T³) / s_v, so q = (lambda_c s_v)² / T³.
        double q = lambdaC * lambdaC * sigmaV * sigmaV / (periodS * periodS * periodS);
        double t = periodS;
        var processNoise = Dense.M(new[,]
        {
            { q * t * t * t / 3, q * t * t / 2 },
            { q * t * t / 2, q * t },
        });

        var (alphaFilter, betaFilter) = SteadyStateGains(processNoise, periodS, sigmaV);

        RelativeAssert.Absolute(alpha, alphaFilter, 1e-6, "alpha");
        RelativeAssert.Absolute(beta, betaFilter, 1e-6, "beta");
    }

    /// <summary>Q = s_w² [[T⁴/4, T³/2], [T³/2, T²]] with s_w = lambda s_v / T² (check-values §4).</summary>
    private static MathNet.Numerics.LinearAlgebra.Matrix<double> DiscreteWhiteNoiseAccelerationQ(
        double lambda, double periodS, double sigmaV)
    {
        double sigmaW = lambda * sigmaV / (periodS * periodS);
        double w2 = sigmaW * sigmaW;
        double t = periodS;
        return Dense.M(new[,]
        {
            { w2 * t * t * t * t / 4, w2 * t * t * t / 2 },
            { w2 * t * t * t / 2, w2 * t * t },
        });
    }

    /// <summary>Runs the dense filter to its steady state and returns (alpha, beta) = (K₀, K₁ T).</summary>
    private static (double Alpha, double Beta) SteadyStateGains(
        MathNet.Numerics.LinearAlgebra.Matrix<double> processNoise, double periodS, double sigmaV)
    {
        var f = Dense.M(new[,] { { 1.0, periodS }, { 0.0, 1.0 } });
        var h = Dense.M(new[,] { { 1.0, 0.0 } });
        var r = Dense.Scalar(sigmaV * sigmaV);
        var random = new Random(1984);
        var estimate = new GaussianEstimate(Dense.V(0.0, 0.0), Dense.M(new[,] { { 1e4, 0.0 }, { 0.0, 1e2 } }));
        DenseUpdateResult? update = null;
        for (int k = 0; k < Steps; k++)
        {
            estimate = DenseKalmanFilter.Predict(estimate, f, processNoise);
            update = DenseKalmanFilter.Update(estimate, Dense.V(sigmaV * Dense.Gaussian(random)), h, r);
            estimate = update.Posterior;
        }

        return (update!.Gain[0, 0], update.Gain[1, 0] * periodS);
    }
}
