// A standing van's stated uncertainty is the best linear unbiased estimate's own: checked against generalised least squares.
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using MathNet.Numerics.LinearAlgebra;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Consistency;

/// <summary>
/// Issue 12: a van parked for hours had its smoothed position inside the 95 % ellipse on every one of 64 drives
/// (docs/estimation.md), which reads as an ellipse too large. This checks the ellipse itself, without random data: for a
/// van at rest, its fixes are y_k = p + e_k + w_k with e a first-order Gauss-Markov error (variance f σ², autocorrelation
/// exp(-|Δt|/τ)) and w white (variance (1 - f) σ²), the filter's own model. The best linear unbiased estimate of the
/// constant p from n such fixes is the generalised least-squares one, of variance (1ᵀ Σ⁻¹ 1)⁻¹ with Σ the fixes' error
/// covariance (Aitken 1935; Kariya and Kurata, <i>Generalized Least Squares</i>, 2004; from memory), computed here with
/// MathNet.Numerics' Cholesky factorisation. A Kalman filter whose model matches is that estimator, so its filtered
/// variance after the last fix and its smoothed variance at every instant of the stop must equal it. The covariance of a
/// linear filter does not depend on the measured values (Kalman 1960), so fixes without error give the same answer as any.
/// </summary>
public sealed class StandstillCovarianceTests(ITestOutputHelper output)
{
    private const double SigmaM = 3.0;
    private const long StartUs = 1_800_000_000_000_000;
    private const double LatitudeDeg = 48.2;
    private const double LongitudeDeg = 16.4;

    [Theory]
    [InlineData(600)]
    [InlineData(1200)]
    public void Issue12_a_standing_vans_filtered_and_smoothed_variance_is_the_generalised_least_squares_variance(int fixes)
    {
        // The model held fixed: the reference has one error model, and the error-free fixes below would otherwise be fitted
        // as a receiver whose error is all correlated (GnssErrorVariogram).
        NoiseProfile profile = NoiseProfile.DeliveryVan with { GnssErrorIdentification = false };
        var processor = new TrackProcessor(new TrackOptions(), profile);
        ReplayResult replay = TrackReplay.Run(processor, TrackState.Empty, Standstill(fixes));

        // The fixes the track took in: it starts from one of its first two (the second confirms it; TrackStartTests), then
        // accepts every later one (all fixes lie on one point).
        int started = replay.Outcomes.Count(o => o.Measurement.Kind == SensorKind.GnssPosition && o.Outcome.Kind == OutcomeKind.Initialising);
        int fused = replay.Outcomes.Count(o => o.Measurement.Kind == SensorKind.GnssPosition && o.Outcome.Kind == OutcomeKind.Accepted);
        Assert.Equal(2, started);
        Assert.Equal(fixes - 2, fused);
        Assert.Single(replay.Forward);
        Assert.Single(replay.Smoothed);

        int used = 1 + fused;
        double referenceSigmaM = Math.Sqrt(GeneralisedLeastSquaresVariance(used, profile.GnssCorrelatedFraction, profile.GnssErrorTimeConstantS));
        var last = replay.Forward[0][^1];
        double filteredEastSigmaM = Math.Sqrt(last.FilteredCovariance[(EastM * StateMatrix.Size) + EastM]);
        double filteredNorthSigmaM = Math.Sqrt(last.FilteredCovariance[(NorthM * StateMatrix.Size) + NorthM]);
        var smoothed = replay.Smoothed[0];
        double smoothedMiddleSigmaM = Math.Sqrt(smoothed.Covariances[smoothed.Count / 2][(EastM * StateMatrix.Size) + EastM]);
        double smoothedFirstSigmaM = Math.Sqrt(smoothed.Covariances[0][(EastM * StateMatrix.Size) + EastM]);
        output.WriteLine($"{used} fixes: GLS sigma {referenceSigmaM:F4} m; filtered east {filteredEastSigmaM:F4}, north {filteredNorthSigmaM:F4}; smoothed first {smoothedFirstSigmaM:F4}, middle {smoothedMiddleSigmaM:F4} m");

        // 3 mm on a standard deviation of 0.8-1.1 m: the wheels' zero-speed pseudo-measurement (0.005 m/s) leaves the
        // position a diffusion of about (0.005 m/s)^2 x 0.1 s per second, at most 0.003 m^2 over 20 min, 2 mm on 0.79 m
        // (derived); one fix more or less in the reference moves it by under 1 mm. A filter as cautious as the 3 h park's
        // containment suggested (variance 1.45 x) would be 16-22 cm off.
        const double ToleranceM = 0.003;
        Assert.InRange(filteredEastSigmaM, referenceSigmaM - ToleranceM, referenceSigmaM + ToleranceM);
        Assert.InRange(filteredNorthSigmaM, referenceSigmaM - ToleranceM, referenceSigmaM + ToleranceM);
        Assert.InRange(smoothedMiddleSigmaM, referenceSigmaM - ToleranceM, referenceSigmaM + ToleranceM);
        Assert.InRange(smoothedFirstSigmaM, referenceSigmaM - ToleranceM, referenceSigmaM + ToleranceM);
    }

    /// <summary>
    /// (1ᵀ Σ⁻¹ 1)⁻¹ for n fixes 1 s apart, Σ_ij = f σ² exp(-|i - j|/τ) + (1 - f) σ² δ_ij, through a Cholesky solve.
    /// </summary>
    private static double GeneralisedLeastSquaresVariance(int n, double share, double timeConstantS)
    {
        double variance = SigmaM * SigmaM;
        var sigma = Matrix<double>.Build.Dense(n, n, (i, j) =>
            (share * variance * Math.Exp(-Math.Abs(i - j) / timeConstantS)) + (i == j ? (1.0 - share) * variance : 0.0));
        var ones = Vector<double>.Build.Dense(n, 1.0);
        return 1.0 / ones.DotProduct(sigma.Cholesky().Solve(ones));
    }

    /// <summary>Fixes at one point every second and wheel speed 0 every 0.1 s from 3 s before the first fix.</summary>
    private static List<Measurement> Standstill(int fixes)
    {
        var list = new List<Measurement>();
        ulong key = 1;
        for (long t = StartUs - 3_000_000; t <= StartUs + ((fixes - 1) * 1_000_000L); t += 100_000)
        {
            if (t >= StartUs && (t - StartUs) % 1_000_000 == 0)
            {
                list.Add(Measurement.GnssPosition(t, key++, LatitudeDeg, LongitudeDeg, SigmaM));
            }

            list.Add(Measurement.WheelSpeed(t, key++, 0.0));
        }

        return list;
    }
}
