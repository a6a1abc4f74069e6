using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Models;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Models;

/// <summary>
/// The analytic CTRA Jacobian against central finite differences (a derived check: the derivative definition,
/// step h = 1e-6 relative, truncation error O(h²)), at random states and at yaw rates near and exactly zero.
/// </summary>
public sealed class CtraJacobianTests
{
    public static TheoryData<double> YawRates => new() { 0.0, 1e-12, 1e-7, -3e-4, 0.05, -0.4, 0.9 };

    [Theory]
    [MemberData(nameof(YawRates))]
    public void Analytic_jacobian_equals_central_differences(double yawRateRps)
    {
        var random = new Random(1234);
        for (int trial = 0; trial < 50; trial++)
        {
            StateVector x = RandomState(random, yawRateRps);
            double dt = 0.01 + (random.NextDouble() * 1.5);
            StateVector propagated = x;
            CtraMotionModel.Predict(ref propagated, dt, out StateMatrix analytic);
            for (int j = 0; j < StateVector.Length; j++)
            {
                double h = 1e-6 * Math.Max(1.0, Math.Abs(x[j]));
                StateVector plus = x, minus = x;
                plus[j] += h;
                minus[j] -= h;
                CtraMotionModel.Predict(ref plus, dt, out _);
                CtraMotionModel.Predict(ref minus, dt, out _);
                for (int i = 0; i < StateVector.Length; i++)
                {
                    double diff = plus[i] - minus[i];
                    if (i == HeadingRad)
                    {
                        diff = Math.IEEERemainder(diff, 2 * Math.PI);
                    }

                    double numeric = diff / (2 * h);
                    // Central differences of these smooth functions are good to about 1e-7 absolute here
                    // (round-off eps * |x| / h with |x| up to 1e3 m, plus O(h^2) truncation).
                    AssertNear.Equal(numeric, analytic[(i * StateMatrix.Size) + j], 2e-6 * Math.Max(1.0, Math.Abs(numeric)), $"dF[{i},{j}] at omega={yawRateRps}, dt={dt}");
                }
            }
        }
    }

    [Fact]
    public void Zero_yaw_rate_is_straight_line_constant_acceleration()
    {
        // Derived: with omega = 0 the CTRA model reduces to s = v T + a T^2 / 2 along the heading.
        StateVector x = default;
        x[HeadingRad] = 0.7;
        x[SpeedMps] = 12.0;
        x[AccelMps2] = -1.5;
        x[WheelScale] = 1.0;
        CtraMotionModel.Predict(ref x, 2.0, out _);
        double s = (12.0 * 2.0) + (0.5 * -1.5 * 4.0);
        AssertNear.Equal(s * Math.Cos(0.7), x[EastM], 1e-12, "east after straight run, m");
        AssertNear.Equal(s * Math.Sin(0.7), x[NorthM], 1e-12, "north after straight run, m");
        AssertNear.Equal(12.0 - 3.0, x[SpeedMps], 1e-12, "speed, m/s");
    }

    [Fact]
    public void Constant_turn_closes_a_circle()
    {
        // Derived: at constant speed v and yaw rate omega the path is a circle of radius v / omega; after 2 pi / omega
        // seconds the vehicle is back where it started, heading unchanged.
        StateVector x = default;
        x[SpeedMps] = 8.0;
        x[YawRateRps] = 0.2;
        x[WheelScale] = 1.0;
        double period = 2 * Math.PI / 0.2;
        for (int k = 0; k < 100; k++)
        {
            CtraMotionModel.Predict(ref x, period / 100, out _);
        }

        AssertNear.Equal(0.0, x[EastM], 1e-9, "east after one lap, m");
        AssertNear.Equal(0.0, x[NorthM], 1e-9, "north after one lap, m");
        AssertNear.Equal(0.0, Math.IEEERemainder(x[HeadingRad], 2 * Math.PI), 1e-12, "heading after one lap, rad");
    }

    [Fact]
    public void Process_noise_is_symmetric_positive_semidefinite()
    {
        var random = new Random(99);
        for (int trial = 0; trial < 100; trial++)
        {
            StateVector x = RandomState(random, random.NextDouble() - 0.5);
            StateMatrix q = default;
            CtraMotionModel.AddProcessNoise(ref q, x, 0.01 + random.NextDouble(), NoiseProfile.DeliveryVan, stationary: false);
            var dense = MathNet.Numerics.LinearAlgebra.Matrix<double>.Build.Dense(StateMatrix.Size, StateMatrix.Size, (i, j) => q[(i * StateMatrix.Size) + j]);
            Assert.True((dense - dense.Transpose()).FrobeniusNorm() == 0, "Q must be exactly symmetric");
            double smallest = dense.Evd(MathNet.Numerics.LinearAlgebra.Symmetricity.Symmetric).EigenValues.Select(c => c.Real).Min();
            Assert.True(smallest > -1e-15 * dense.FrobeniusNorm(), $"Q has a negative eigenvalue {smallest}");
        }
    }

    private static StateVector RandomState(Random random, double yawRateRps)
    {
        StateVector x = default;
        x[EastM] = (random.NextDouble() - 0.5) * 2000;
        x[NorthM] = (random.NextDouble() - 0.5) * 2000;
        x[HeadingRad] = (random.NextDouble() - 0.5) * 2 * Math.PI;
        x[SpeedMps] = random.NextDouble() * 25;
        x[YawRateRps] = yawRateRps;
        x[AccelMps2] = (random.NextDouble() - 0.5) * 6;
        x[GyroBiasRps] = (random.NextDouble() - 0.5) * 0.02;
        x[WheelScale] = 0.95 + (random.NextDouble() * 0.1);
        return x;
    }
}
