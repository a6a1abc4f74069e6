namespace FusionService.Storage.BaseLayer;

/// <summary>A place where vehicles stood: the mean position of the standing estimates in one stop cell.</summary>
/// <param name="LatDeg">Mean WGS-84 latitude of the standing estimates, degrees.</param>
/// <param name="LonDeg">Mean WGS-84 longitude, degrees.</param>
/// <param name="DwellMinutes">Vehicle-minutes with a standing estimate in the cell (a vehicle standing 10 minutes counts 10).</param>
/// <param name="Vehicles">Different vehicles that stood there.</param>
public sealed record StopRow(double LatDeg, double LonDeg, long DwellMinutes, long Vehicles);
