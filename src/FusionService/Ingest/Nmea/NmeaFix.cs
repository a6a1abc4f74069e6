// One GNSS epoch read from NMEA sentences, ready to become a telemetry message.
namespace FusionService.Ingest.Nmea;

/// <summary>A position fix (GGA, with the speed and course of the RMC of the same epoch when there is one).</summary>
/// <param name="TimeUs">UTC time, Unix microseconds.</param>
/// <param name="LatDeg">Latitude, degrees, north positive.</param>
/// <param name="LonDeg">Longitude, degrees, east positive.</param>
/// <param name="Hdop">Horizontal dilution of precision (multiplied by the configured UERE for the accuracy).</param>
/// <param name="SpeedMps">Speed over ground, m/s (knots x 1852 / 3600), or null.</param>
/// <param name="CourseDeg">Course over ground, degrees clockwise from true north in [0, 360) (360 read as 0), or null.</param>
/// <param name="Lines">The body lines (1-based) this fix came from: the GGA, then the RMC when there is one.</param>
public sealed record NmeaFix(long TimeUs, double LatDeg, double LonDeg, double Hdop, double? SpeedMps, double? CourseDeg, IReadOnlyList<int> Lines)
{
    /// <summary>Fields of the RMC (speed, course) that were invalid and left out; the fix keeps the rest.</summary>
    public IReadOnlyList<DroppedField> DroppedFields { get; init; } = [];
}
