// The values of a GNSS position fix under their own names.
namespace FusionService.Estimation.Measurements;

/// <summary>A <see cref="SensorKind.GnssPosition"/> measurement's values (see <see cref="Measurement.AsGnssFix"/>).</summary>
/// <param name="LatitudeDeg">Latitude, degrees.</param>
/// <param name="LongitudeDeg">Longitude, degrees.</param>
/// <param name="AccuracyM">1-sigma per-axis horizontal accuracy, metres (stored in single precision).</param>
public readonly record struct GnssFixView(double LatitudeDeg, double LongitudeDeg, float AccuracyM);
