namespace FusionService.Estimation.Diagnostics;

/// <summary>Distance travelled over an interval, from a smoothed track.</summary>
/// <param name="DistanceM">Distance along the path, metres.</param>
/// <param name="SigmaM">Its standard deviation, metres (from the smoothed covariances and their cross-covariances).</param>
/// <param name="StationaryS">Time the smoothed speed stayed at or below the standstill threshold, seconds.</param>
/// <param name="CoveredS">Time of the interval covered by smoothed segments, seconds (gaps and resets are not).</param>
/// <param name="CarriedM">The part of <paramref name="DistanceM"/> covered while the vehicle was carried (towed, on a ferry, lifted), metres.</param>
public readonly record struct DistanceEstimate(double DistanceM, double SigmaM, double StationaryS, double CoveredS, double CarriedM = 0);
