using FusionService.Estimation.Measurements;

namespace FusionService.Estimation.Diagnostics;

/// <summary>Innovation statistics of one sensor kind.</summary>
/// <param name="Sensor">Sensor kind.</param>
/// <param name="Count">Measurements with an innovation (accepted plus gated).</param>
/// <param name="Gated">Measurements rejected by the gate.</param>
/// <param name="MeanNis">Mean NIS of the accepted measurements in the window (NaN when none).</param>
/// <param name="WindowCount">Accepted measurements the mean is over.</param>
/// <param name="WindowDof">Total degrees of freedom of those measurements.</param>
/// <param name="Lower">Lower end of the two-sided 95 % interval for the mean (NaN when none).</param>
/// <param name="Upper">Upper end of the interval (NaN when none).</param>
/// <param name="Verdict">Consistency verdict.</param>
public readonly record struct InnovationSummary(
    SensorKind Sensor, long Count, long Gated, double MeanNis, int WindowCount, int WindowDof, double Lower, double Upper, ConsistencyVerdict Verdict);
