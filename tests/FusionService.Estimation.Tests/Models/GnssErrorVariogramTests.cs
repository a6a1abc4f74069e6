using FusionService.Estimation.Models;
using MathNet.Numerics.Distributions;

namespace FusionService.Estimation.Tests.Models;

/// <summary>
/// The per-receiver fit of the GNSS error's correlated share and time constant (<see cref="GnssErrorVariogram"/>) against
/// ../shared/check-values.md section 10 (first-order Gauss-Markov process, Brown and Hwang 2012; from memory) and against
/// simulated receivers of known parameters.
/// </summary>
public sealed class GnssErrorVariogramTests
{
    /// <summary>
    /// The semivariogram of white noise (1 - f) σ² plus a Gauss-Markov process f σ² with autocorrelation
    /// f σ² exp(-|k|/τ) (Brown and Hwang 2012, check-values section 10; from memory) is γ(k) = σ² - f σ² exp(-|k|/τ) for
    /// k &gt; 0 (derived). With the section's check value φ = exp(-1/45) = 0.978023 (derived) and f = 0.75 the expected
    /// normalised squared difference at a lag of 1 s is 2 (1 - 0.75 × 0.978023) = 0.5329655.
    /// </summary>
    [Fact]
    public void Expected_difference_at_one_second_matches_the_Gauss_Markov_check_value()
    {
        AssertNear.Equal(2.0 * (1.0 - (0.75 * 0.978023)), GnssErrorVariogram.ExpectedNormalisedSquare(0.75, 45.0, 1.0), 1e-6, "2γ(1 s)/σ² (dimensionless)");
        AssertNear.Equal(2.0, GnssErrorVariogram.ExpectedNormalisedSquare(0.75, 45.0, 1e6), 1e-12, "2γ(∞)/σ² (dimensionless): the sill is the total variance");
    }

    /// <summary>The two-lag method-of-moments solution recovers (f, τ) exactly from the model's own moments (derived).</summary>
    [Theory]
    [InlineData(0.5, 20.0)]
    [InlineData(0.75, 60.0)]
    [InlineData(0.95, 120.0)]
    [InlineData(0.35, 250.0)]
    public void Two_lag_fit_inverts_the_model(double share, double tauS)
    {
        double shortMean = GnssErrorVariogram.ExpectedNormalisedSquare(share, tauS, 1.0);
        double longMean = GnssErrorVariogram.ExpectedNormalisedSquare(share, tauS, 31.0);
        (double fittedShare, double fittedTauS) = GnssErrorVariogram.FitTwoLags(1.0, shortMean, 31.0, longMean, 0.75, 60.0);
        AssertNear.Equal(share, fittedShare, 1e-9, "correlated share (dimensionless)");
        AssertNear.Equal(tauS, fittedTauS, 1e-6 * tauS, "time constant (s)");
    }

    /// <summary>
    /// Outside the bounds the fit is held at them: white noise (nothing left correlated at either lag) gives the shortest
    /// time constant and the smallest share, an error that does not decorrelate within the lags the longest one.
    /// </summary>
    [Fact]
    public void Fit_is_held_within_its_bounds()
    {
        (double whiteShare, double whiteTauS) = GnssErrorVariogram.FitTwoLags(1.0, 2.0, 31.0, 2.0, 0.75, 60.0);
        AssertNear.Equal(GnssErrorVariogram.MinTimeConstantS, whiteTauS, 0, "time constant of white noise (s): u(k₁) = u(k₂) = 0");
        AssertNear.Equal(GnssErrorVariogram.MinShare, whiteShare, 0, "share of white noise (dimensionless)");
        (double _, double stuckTauS) = GnssErrorVariogram.FitTwoLags(1.0, 0.2, 31.0, 0.2, 0.75, 60.0);
        AssertNear.Equal(GnssErrorVariogram.MaxTimeConstantS, stuckTauS, 0, "time constant of an error that does not decorrelate (s)");
        (double _, double fastTauS) = GnssErrorVariogram.FitTwoLags(1.0, 0.5, 31.0, 2.5, 0.75, 60.0);
        AssertNear.Equal(GnssErrorVariogram.MinTimeConstantS, fastTauS, 0, "time constant when the long lag exceeds the sill (s)");
    }

    /// <summary>
    /// A receiver standing for 6 h at 1 Hz, its error simulated exactly as the check values describe (φ and q/σ² of the
    /// Gauss-Markov discretisation, white noise beside it): the fit lands near the true (f, τ), far from the profile's
    /// (0.75, 60 s) it started from. Tolerances: the forgetting keeps about 200 long-lag pairs per axis, so the long-lag
    /// moment has a relative standard error near √(2/200) = 0.1 (chi-square with one degree of freedom per pair; pairs
    /// 30 s apart of a process correlated over minutes are not independent, which the margins allow for); that moves
    /// τ by up to about a quarter at τ = 120 s.
    /// </summary>
    [Theory]
    [InlineData(0.95, 120.0, 11)]
    [InlineData(0.5, 20.0, 12)]
    [InlineData(0.8, 40.0, 13)]
    public void Standing_receiver_gives_its_own_share_and_time_constant(double share, double tauS, int seed)
    {
        const double SigmaM = 3.0;
        var random = new Random(seed);
        var fit = default(GnssErrorVariogram);
        double phi = Math.Exp(-1.0 / tauS);
        double correlatedSigma = SigmaM * Math.Sqrt(share), whiteSigma = SigmaM * Math.Sqrt(1.0 - share);
        double drivingSigma = correlatedSigma * Math.Sqrt(1.0 - (phi * phi));
        double e = correlatedSigma * Normal.Sample(random, 0, 1), n = correlatedSigma * Normal.Sample(random, 0, 1);
        for (int k = 1; k <= 6 * 3600; k++)
        {
            e = (phi * e) + (drivingSigma * Normal.Sample(random, 0, 1));
            n = (phi * n) + (drivingSigma * Normal.Sample(random, 0, 1));
            double eastM = e + (whiteSigma * Normal.Sample(random, 0, 1)), northM = n + (whiteSigma * Normal.Sample(random, 0, 1));
            fit.Observe(k * 1_000_000L, eastM, northM, SigmaM * SigmaM, 0.75, 60.0);
        }

        Assert.True(fit.HasEstimate, "no fit after 6 h standing");
        AssertNear.Equal(share, fit.Share, 0.05, "correlated share (dimensionless)");
        AssertNear.Equal(tauS, fit.TimeConstantS, 0.3 * tauS, "time constant (s)");
    }

    /// <summary>A broken chain closes no pair: fixes that are never 30 s into one standstill give no estimate.</summary>
    [Fact]
    public void Broken_chains_close_no_long_pair()
    {
        var fit = default(GnssErrorVariogram);
        for (int k = 1; k <= 600; k++)
        {
            fit.Observe(k * 1_000_000L, 0.1 * (k % 7), 0.0, 9.0, 0.75, 60.0);
            if (k % 20 == 0)
            {
                fit.Break();
            }
        }

        Assert.False(fit.HasEstimate);
        Assert.Equal(0.0, fit.LongCount);
        Assert.True(fit.ShortCount > 0, "successive fixes inside a chain should have closed short-lag pairs");
    }
}
