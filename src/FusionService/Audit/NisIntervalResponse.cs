// The 95 % interval of a mean NIS.
namespace FusionService.Audit;

/// <summary>
/// Two-sided 95 % region of the mean of N NIS values with total dimension D (D = N m): [χ²(0.025; D), χ²(0.975; D)] / N
/// (Bar-Shalom, Li and Kirubarajan 2001, NIS test).
/// </summary>
/// <param name="Lower">Lower end.</param>
/// <param name="Upper">Upper end.</param>
public sealed record NisIntervalResponse(double Lower, double Upper);
