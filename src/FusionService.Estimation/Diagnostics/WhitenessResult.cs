namespace FusionService.Estimation.Diagnostics;

/// <summary>Result of a whiteness test of one scalar series of normalised innovations (<see cref="InnovationWhitenessTest"/>).</summary>
/// <param name="SampleCount">Number N of values tested.</param>
/// <param name="Autocorrelation">Sample autocorrelations r(1) .. r(h), dimensionless (NaN where not computable).</param>
/// <param name="BandHalfWidth">Half-width z / √N of the 95 % band of each r(k) for a white series (1.96 / √N), NaN when N is 0.</param>
/// <param name="LagsOutsideBand">How many of the h autocorrelations lie outside ±<paramref name="BandHalfWidth"/>.</param>
/// <param name="LjungBoxQ">Ljung-Box statistic Q, NaN when not computable (fewer samples than lags, or no variance).</param>
/// <param name="Dof">Degrees of freedom h of the chi-square reference of Q (the number of lags).</param>
/// <param name="CriticalValue">Upper critical value χ²(1 - <paramref name="Significance"/>; h).</param>
/// <param name="Significance">Level α of the test, e.g. 0.05.</param>
/// <param name="Verdict">White, correlated (Q above the critical value) or too few samples.</param>
public sealed record WhitenessResult(
    long SampleCount,
    IReadOnlyList<double> Autocorrelation,
    double BandHalfWidth,
    int LagsOutsideBand,
    double LjungBoxQ,
    int Dof,
    double CriticalValue,
    double Significance,
    WhitenessVerdict Verdict)
{
    /// <summary>The lag-1 autocorrelation r(1), or NaN when there is none.</summary>
    public double Lag1 => Autocorrelation.Count > 0 ? Autocorrelation[0] : double.NaN;
}
