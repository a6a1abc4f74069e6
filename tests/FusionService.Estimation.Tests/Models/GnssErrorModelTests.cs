using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Models;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Models;

/// <summary>The Gauss-Markov GNSS error states against the check values of ../shared/check-values.md section 10.</summary>
public sealed class GnssErrorModelTests
{
    /// <summary>
    /// Brown and Hwang 2012 (first-order Gauss-Markov process; from memory): φ = exp(-Δt/τ), q/σ² = 1 - φ². Check values
    /// (derived): τ = 45 s, Δt = 1 s gives φ = 0.978023 and q/σ² = 0.043471.
    /// </summary>
    [Fact]
    public void Discretisation_matches_the_check_values()
    {
        double phi = GnssErrorModel.TransitionFactor(1.0, 45.0);
        AssertNear.Equal(0.978023, phi, 5e-7, "φ (dimensionless)");
        AssertNear.Equal(0.043471, GnssErrorModel.DrivingVarianceFactor(phi), 5e-7, "q/σ² (dimensionless)");
    }

    /// <summary>
    /// Stationarity (derived): starting from the stationary variance σ², one step of φ² P + σ² (1 - φ²) gives σ² again,
    /// whatever the step; and the mean decays by φ.
    /// </summary>
    [Theory]
    [InlineData(0.1, 20.0)]
    [InlineData(1.0, 60.0)]
    [InlineData(7.5, 120.0)]
    public void One_step_keeps_the_stationary_variance_and_decays_the_mean(double dtS, double tauS)
    {
        const double sigma2 = 6.25;
        StateVector x = default;
        x[GnssErrorEastM] = 2.0;
        x[GnssErrorNorthM] = -1.0;
        StateMatrix f = StateIdentityForTests();
        GnssErrorModel.Predict(ref x, ref f, dtS, tauS);
        double phi = Math.Exp(-dtS / tauS);
        AssertNear.Equal(2.0 * phi, x[GnssErrorEastM], 1e-12, "east error mean (m)");
        AssertNear.Equal(-phi, x[GnssErrorNorthM], 1e-12, "north error mean (m)");
        AssertNear.Equal(phi, f[(GnssErrorEastM * StateMatrix.Size) + GnssErrorEastM], 1e-15, "F east (dimensionless)");

        StateMatrix p = default;
        p[(GnssErrorEastM * StateMatrix.Size) + GnssErrorEastM] = sigma2 * phi * phi;
        GnssErrorModel.AddProcessNoise(ref p, dtS, tauS, sigma2);
        AssertNear.Equal(sigma2, p[(GnssErrorEastM * StateMatrix.Size) + GnssErrorEastM], 1e-12, "stationary variance (m²)");
    }

    private static StateMatrix StateIdentityForTests()
    {
        StateMatrix identity = default;
        for (int i = 0; i < StateMatrix.Size; i++)
        {
            identity[(i * StateMatrix.Size) + i] = 1.0;
        }

        return identity;
    }
}
