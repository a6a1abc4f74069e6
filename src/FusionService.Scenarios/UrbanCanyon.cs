// A span of degraded GNSS: biased, wider and heavy-tailed position errors.
namespace FusionService.Scenarios;

/// <summary>
/// A span of time in which GNSS position fixes are degraded as between tall buildings: a constant bias and a
/// larger, heavy-tailed error. Values are invented scenario settings (deep urban canyons show 10-50 m errors with
/// heavy tails, from memory).
/// </summary>
/// <remarks>
/// The error is bias + σ sqrt((ν - 2) / ν) (z_e, z_n) / sqrt(χ²_ν / ν) with z standard normal and one χ²_ν draw per fix
/// shared by both axes: a bivariate Student-t with ν degrees of freedom whose per-axis standard deviation is σ
/// (requires ν &gt; 2). With ν = +∞ the error is Gaussian.
/// </remarks>
/// <param name="Span">When the degradation applies.</param>
/// <param name="BiasEastM">Constant east error, metres.</param>
/// <param name="BiasNorthM">Constant north error, metres.</param>
/// <param name="SigmaM">Per-axis standard deviation of the error about the bias, metres, positive.</param>
/// <param name="DegreesOfFreedom">Student-t degrees of freedom ν, above 2, or +∞ for Gaussian. Default 4.</param>
/// <param name="ReportedSigmaM">1-sigma accuracy the receiver reports in the span, metres; null reports <paramref name="SigmaM"/>.</param>
public readonly record struct UrbanCanyon(
    TimeInterval Span, double BiasEastM, double BiasNorthM, double SigmaM, double DegreesOfFreedom = 4.0, double? ReportedSigmaM = null);
