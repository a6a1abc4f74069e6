// The whiteness test of one sensor's innovations.
namespace FusionService.Audit;

/// <summary>
/// Whiteness of one sensor's whitened innovations w = L⁻¹ ν in the window: for a consistent filter they are independent
/// from one measurement to the next, so their sample autocorrelations stay inside ±1.96/√N and the Ljung-Box statistic
/// stays below its chi-square critical value (Mehra 1970; Ljung and Box 1978). Each component of a 2-D innovation is
/// tested as its own series, at level <c>significance</c> divided by the number of components (Bonferroni), so that the
/// sensor's false-alarm rate stays at most <c>significance</c>.
/// </summary>
/// <param name="Verdict">white, correlated (some component failed) or insufficient_data.</param>
/// <param name="Lags">Number of lags h tested (in measurements of this sensor, not seconds).</param>
/// <param name="Significance">Level α of the sensor's test, 0.05.</param>
/// <param name="Components">One entry per innovation component with samples.</param>
public sealed record WhitenessResponse(string Verdict, int Lags, double Significance, IReadOnlyList<WhitenessComponentResponse> Components);
