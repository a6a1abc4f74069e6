// The NIS of one fused measurement with the values that fix its dimension.
namespace FusionService.Storage.Audit;

/// <summary>One accepted (fused) measurement's NIS and the stored values its innovation dimension depends on.</summary>
/// <param name="Kind">Sensor kind code.</param>
/// <param name="V0">First stored value (see <c>measurements.v0</c>).</param>
/// <param name="V1">Second stored value, or null.</param>
/// <param name="Nis">Normalised innovation squared, dimensionless, non-negative.</param>
public readonly record struct NisSample(short Kind, double V0, double? V1, double Nis);
