using FusionService.Estimation.Gating;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// Gate thresholds against the chi-square upper critical values of the NIST/SEMATECH e-Handbook of Statistical
/// Methods, section 1.3.6.7.4: source check-values §1 (published). The table gives 5 decimals, so the
/// tolerance is half a unit in the last place, 5e-6.
/// </summary>
public sealed class ChiSquareGateTableTests
{
    private const double TableTolerance = 0.5e-5;

    [Theory]
    // NIST/SEMATECH e-Handbook 1.3.6.7.4 (published): dof, upper tail, critical value.
    [InlineData(1, 0.05, 3.84146)]
    [InlineData(2, 0.05, 5.99146)]
    [InlineData(3, 0.05, 7.81473)]
    [InlineData(4, 0.05, 9.48773)]
    [InlineData(1, 0.01, 6.63490)]
    [InlineData(2, 0.01, 9.21034)]
    [InlineData(3, 0.01, 11.34487)]
    [InlineData(4, 0.01, 13.27670)]
    public void Thresholds_equal_the_NIST_table(int dof, double upperTail, double critical)
    {
        double probability = 1 - upperTail;

        RelativeAssert.Absolute(critical, ChiSquareGate.Quantile(probability, dof), TableTolerance, $"chi2 quantile, dof {dof}, tail {upperTail}");
        RelativeAssert.Absolute(critical, new ChiSquareGate(probability).Threshold(dof), TableTolerance, $"gate threshold, dof {dof}, tail {upperTail}");
    }

    [Theory]
    [InlineData(0.05)]
    [InlineData(0.01)]
    [InlineData(0.0003)]
    public void Two_degrees_of_freedom_use_the_exact_closed_form(double upperTail)
    {
        // check-values §1 (derived): for dof = 2 the quantile is -2 ln(alpha). The gate takes p = 1 - alpha,
        // which rounds alpha by up to half an ulp of 1 (2^-53); that moves -2 ln(alpha) by a relative
        // 2^-53 / (alpha |ln alpha|), added to 1e-15 for the logarithm's own rounding.
        double exact = -2 * Math.Log(upperTail);
        double tolerance = 1e-15 + (Math.Pow(2, -53) / (upperTail * Math.Abs(Math.Log(upperTail))));

        RelativeAssert.Relative(exact, ChiSquareGate.Quantile(1 - upperTail, 2), tolerance, "chi2 quantile, dof 2");
        RelativeAssert.Relative(exact, new ChiSquareGate(1 - upperTail).Threshold(2), tolerance, "gate threshold, dof 2");
    }

    [Fact]
    public void Gate_passes_at_the_threshold_and_rejects_above_it_and_NaN()
    {
        var gate = new ChiSquareGate(0.95);
        double threshold = gate.Threshold(1);

        Assert.True(gate.Passes(threshold, 1));
        Assert.False(gate.Passes(Math.BitIncrement(threshold), 1));
        Assert.False(gate.Passes(double.NaN, 1));
    }
}
