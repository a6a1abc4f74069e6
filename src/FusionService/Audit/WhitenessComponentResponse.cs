// The whiteness test of one component of a sensor's innovations.
namespace FusionService.Audit;

/// <summary>Autocorrelation and Ljung-Box test of one component of a sensor's whitened innovations.</summary>
/// <param name="Component">What the component measures: east, north (gnss_position), speed, heading (gnss_velocity), speed (wheel), yaw_rate, acceleration (imu).</param>
/// <param name="Samples">Number N of fused measurements tested, in time order.</param>
/// <param name="Lag1">Lag-1 sample autocorrelation r(1), dimensionless (null when not computable).</param>
/// <param name="Band">Half-width 1.96/√N of the 95 % band of each r(k) for white innovations (null when N is 0).</param>
/// <param name="Autocorrelation">r(1) .. r(h), about a known zero mean (a persistent bias counts as correlation); null entries where not computable.</param>
/// <param name="LagsOutsideBand">How many of the h autocorrelations lie outside ±band (about h/20 by chance).</param>
/// <param name="LjungBoxQ">Ljung-Box statistic Q = N (N + 2) Σ r(k)² / (N - k) (null when not computable).</param>
/// <param name="CriticalValue">Upper critical value of chi-square with <paramref name="Dof"/> degrees of freedom at <paramref name="Significance"/>.</param>
/// <param name="Dof">Degrees of freedom h.</param>
/// <param name="Significance">Level of this component's test (the sensor's level divided by its number of components).</param>
/// <param name="Verdict">white, correlated (Q above the critical value) or insufficient_data.</param>
public sealed record WhitenessComponentResponse(
    string Component,
    long Samples,
    double? Lag1,
    double? Band,
    IReadOnlyList<double?> Autocorrelation,
    int LagsOutsideBand,
    double? LjungBoxQ,
    double CriticalValue,
    int Dof,
    double Significance,
    string Verdict);
