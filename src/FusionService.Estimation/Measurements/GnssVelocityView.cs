// The values of a GNSS speed-and-course measurement under their own names.
namespace FusionService.Estimation.Measurements;

/// <summary>A <see cref="SensorKind.GnssVelocity"/> measurement's values (see <see cref="Measurement.AsGnssVelocity"/>).</summary>
/// <param name="SpeedMps">Speed over ground, m/s.</param>
/// <param name="CourseRad">Course over ground, radians clockwise from true north; NaN when the receiver gave none.</param>
/// <param name="SpeedAccuracyMps">1-sigma speed accuracy, m/s (stored in single precision).</param>
public readonly record struct GnssVelocityView(double SpeedMps, double CourseRad, float SpeedAccuracyMps)
{
    /// <summary>True when the receiver gave a course (<see cref="CourseRad"/> is not NaN).</summary>
    public bool HasCourse => !double.IsNaN(CourseRad);
}
