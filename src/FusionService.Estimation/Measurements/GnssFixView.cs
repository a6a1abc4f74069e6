// The values of a GNSS position fix under their own names.
namespace FusionService.Estimation.Measurements;

/// <summary>A <see cref="SensorKind.GnssPosition"/> measurement's values (see <see cref="Measurement.AsGnssFix"/>).</summary>
/// <param name="LatitudeDeg">Latitude, degrees.</param>
/// <param name="LongitudeDeg">Longitude, degrees.</param>
/// <param name="AccuracyM">1-sigma per-axis horizontal accuracy, metres (stored in single precision).</param>
/// <param name="AccuracyFromHdop">
/// Whether <paramref name="AccuracyM"/> was derived from HDOP × an assumed UERE (<see cref="HorizontalAccuracy.FromHdop"/>)
/// rather than stated by the receiver: its scale is then the assumption's, not the receiver's.
/// </param>
public readonly record struct GnssFixView(double LatitudeDeg, double LongitudeDeg, float AccuracyM, bool AccuracyFromHdop = false);
