// A fused speed estimate at one instant.
namespace FusionService.Storage.Audit;

/// <summary>The speed of one stored fused state.</summary>
/// <param name="TimeUs">Time of the state, Unix microseconds.</param>
/// <param name="SpeedMps">Estimated speed, m/s.</param>
public readonly record struct SpeedSample(long TimeUs, double SpeedMps);
