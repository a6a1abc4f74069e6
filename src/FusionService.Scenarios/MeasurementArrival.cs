// One measurement as it reaches the server.
using FusionService.Estimation.Measurements;

namespace FusionService.Scenarios;

/// <summary>One measurement as it arrives at the server.</summary>
/// <param name="ArrivalTimeUs">Arrival time, Unix microseconds.</param>
/// <param name="Measurement">The measurement (identical, key included, in every copy).</param>
/// <param name="BatchIndex">Upload batch that carried it (0-based in creation order); for the shuffle helpers the measurement's input index.</param>
/// <param name="IsRetryCopy">True for the second delivery of a batch that the tracker sent again.</param>
public readonly record struct MeasurementArrival(long ArrivalTimeUs, Measurement Measurement, int BatchIndex, bool IsRetryCopy);
